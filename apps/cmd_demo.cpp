// `unfurl demo`: generates a scenario with known hidden quantities (by default the ocean-buoy
// fleet of engine/synthetic.hpp), writes it as a point file, unfolds it with the embed job
// and reports how well the map recovers the hidden quantities.
#include <fmt/core.h>

#include <cmath>
#include <filesystem>
#include <memory>

#include "apps/created_folder.hpp"
#include "apps/embed_job.hpp"
#include "apps/memory_guard.hpp"
#include "apps/option_scope.hpp"
#include "apps/run_info.hpp"
#include "engine/error.hpp"
#include "engine/synthetic.hpp"
#include "io/atomic_output.hpp"
#include "io/hdf5_file.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {
namespace {

struct DemoArgs {
  std::string scenario = "ocean-buoys";
  std::size_t points = 4000;
  std::string out = "demo-output";
  std::optional<double> noise;  // none: the scenario's own default
  bool data_only = false;
  EmbedArgs embed;
};

SyntheticSet generate(const DemoArgs& a, std::uint64_t seed) {
  if (a.scenario == "swiss-roll") return swiss_roll(a.points, seed, a.noise.value_or(0.0));
  if (a.scenario == "s-curve") return s_curve(a.points, seed, a.noise.value_or(0.0));
  return ocean_buoys(a.points, seed, a.noise.value_or(0.02));
}

std::size_t scenario_columns(const DemoArgs& a) {
  return a.scenario == "ocean-buoys" ? kBuoyChannels : 3;
}

// Bytes the demo holds for the whole run besides the embed job's own copy of the points:
// the scenario (d channels and its two truth columns, float32). --data-only holds the
// scenario and the compressed copy being written (counted as a second one).
std::uint64_t scenario_bytes(const DemoArgs& a) {
  const double n = static_cast<double>(a.points), d = static_cast<double>(scenario_columns(a));
  return static_cast<std::uint64_t>(std::min(n * (4 * d + 8) * (a.data_only ? 2 : 1), 0x1p63));
}

// Everything that can be refused before a file is written: options that do not apply, the
// embed job's options on this many points, and the memory the run would need.
void check_demo(const GlobalOptions& g, const CLI::App& cmd, const DemoArgs& a) {
  RunShape shape = embed_run_shape(a.embed);
  shape.demo = true;
  shape.data_only = a.data_only;
  refuse_unused_options(cmd, shape);
  if (!a.data_only) {
    check_job_options(g, a.embed,
                      {.points = a.points,
                       .columns = scenario_columns(a),
                       .held_bytes = scenario_bytes(a),
                       .subject = fmt::format("--point-count {}", a.points)});
    return;
  }
  const MemoryLimit limit = memory_limit(a.embed.max_memory);
  const std::uint64_t need = scenario_bytes(a) + MemoryShape{}.baseline;
  if (need > limit.bytes)
    throw ResourceError(fmt::format(
        "--point-count {}: the demo would need about {}, over the limit of {} ({}); use fewer "
        "points{}",
        a.points, human_bytes(need), human_bytes(limit.bytes), limit.source,
        limit.source == "--max-memory" ? " or raise --max-memory" : ""));
}

void write_scenario(io::OutputSet& outputs, std::size_t output, const DemoArgs& a,
                    const SyntheticSet& s, std::uint64_t seed) {
  outputs.write(output, [&](const std::filesystem::path& temp) {
    io::H5Writer w(temp);
    w.write("/points", s.points.values, {s.points.rows, s.points.cols}, {.gzip_level = 4});
    // The hidden quantities as 1-D datasets, so /points stays the file's only 2-D dataset
    // and every command picks it without --dataset.
    for (std::size_t c = 0; c < s.truth.cols; ++c) {
      std::vector<float> column(s.truth.rows);
      for (std::size_t i = 0; i < s.truth.rows; ++i) column[i] = s.truth.row(i)[c];
      w.write("/truth/" + s.truth_names[c], column, {s.truth.rows});
    }
    w.set_string_attribute("/", "scenario", a.scenario);
    w.set_string_attribute("/", "description",
                           "invented demo data of unfurl; /truth/* hold the hidden quantities");
    w.set_int_attribute("/", "seed", static_cast<std::int64_t>(seed));
    w.close();
  });
}

// |Pearson correlation| of map axis `axis` with truth column `col` over the map rows.
double abs_correlation(const PointSet& map, std::size_t axis, const PointSet& truth,
                       std::size_t col, const std::vector<std::int64_t>& rows) {
  const double n = static_cast<double>(rows.size());
  double sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0;
  for (std::size_t r = 0; r < rows.size(); ++r) {
    const double x = map.row(r)[axis];
    const double y = truth.row(static_cast<std::size_t>(rows[r]))[col];
    sx += x;
    sy += y;
    sxx += x * x;
    syy += y * y;
    sxy += x * y;
  }
  const double cov = sxy - sx * sy / n;
  const double vx = sxx - sx * sx / n, vy = syy - sy * sy / n;
  return vx > 0 && vy > 0 ? std::abs(cov / std::sqrt(vx * vy)) : 0.0;
}

void run_demo(const GlobalOptions& g, const CLI::App& cmd, DemoArgs& a) {
  apply_globals(g);
  check_demo(g, cmd, a);
  namespace fs = std::filesystem;
  CreatedFolder folder(a.out, "--out-dir");
  // The scenario, its map and its report are one output set, committed together.
  io::OutputSet outputs(stop_token());
  const fs::path data = fs::path(a.out) / (a.scenario + ".h5");
  const std::size_t data_out = outputs.add(data, "--out-dir");
  a.embed.output = (fs::path(a.out) / (a.scenario + "-map.h5")).string();
  a.embed.json = (fs::path(a.out) / (a.scenario + "-report.json")).string();
  JobOutputs where =
      a.data_only ? JobOutputs{} : add_job_outputs(outputs, a.embed, "--out-dir", "--out-dir");
  // The report page and its figures, beside the map: what a newcomer opens first.
  if (!a.data_only) where.plots = add_run_plots(outputs, a.out, !a.embed.no_score, "--out-dir");

  const SyntheticSet set = generate(a, g.seed);
  write_scenario(outputs, data_out, a, set, g.seed);
  const auto written = fmt::format(
      "demo: {} records x {} channels of the '{}' scenario written "
      "to {}",
      set.points.rows, set.points.cols, a.scenario, data.string());
  if (a.data_only) {
    outputs.commit();
    folder.keep();
    say(g, written);
    return;
  }

  JobInput in;
  in.points = set.points;
  in.rows.resize(set.points.rows);
  for (std::size_t i = 0; i < in.rows.size(); ++i) in.rows[i] = static_cast<std::int64_t>(i);
  // The point file is still under its temporary name; its identity is that file's, by the
  // name it will have (a rename keeps size and modification time).
  in.identity = io::input_identity(outputs.temp_path(data_out), "/points");
  in.identity["path"] = fs::absolute(data).string();
  in.identity["file_rows"] = set.points.rows;
  in.identity["columns"] = set.points.cols;
  in.held_bytes = scenario_bytes(a);
  EmbedResult result;
  run_embed_job(g, a.embed, std::move(in), outputs, where, &result);
  folder.keep();
  say(g, written);

  for (std::size_t c = 0; c < set.truth.cols; ++c) {
    std::size_t best = 0;
    double best_r = -1;
    for (std::size_t axis = 0; axis < result.coords.cols; ++axis) {
      std::vector<std::int64_t> rows(result.rows.begin(), result.rows.end());
      const double r = abs_correlation(result.coords, axis, set.truth, c, rows);
      if (r > best_r) best_r = r, best = axis;
    }
    say(g, fmt::format("recovery: hidden '{}' follows map axis {} with |correlation| {:.3f}",
                       set.truth_names[c], best + 1, best_r));
  }
  say(g, fmt::format("demo: map {}, figures as JSON {}", a.embed.output, a.embed.json));
  say(g, fmt::format("demo: open {} in a browser: the map, its scores, plots and warnings",
                     (fs::path(a.out) / "report.html").string()));
}

}  // namespace

void add_demo_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand("demo",
                                 "Generate a scenario with known hidden quantities and "
                                 "unfold it");
  auto a = std::make_shared<DemoArgs>();
  cmd->add_option("--scenario", a->scenario, "Which invented scenario to generate")
      ->check(CLI::IsMember({"ocean-buoys", "swiss-roll", "s-curve"}))
      ->capture_default_str();
  auto* count =
      cmd->add_option("--point-count", a->points, "Number of points (records) to generate")
          ->transform(whole_number(3, std::uint64_t{1} << 31))
          ->capture_default_str();
  add_old_spelling(cmd, "--points", count, a->points)
      ->transform(whole_number(3, std::uint64_t{1} << 31));
  cmd->add_option("--noise", a->noise,
                  "Standard deviation of the added noise (default: 0.02 for ocean-buoys, 0 "
                  "otherwise)")
      ->check(non_negative_number());
  auto* folder = cmd->add_option("--out-dir", a->out, "Folder for the scenario, its map and report")
                     ->capture_default_str();
  add_old_spelling(cmd, "--out", folder, a->out);
  cmd->add_flag("--data-only", a->data_only, "Write the scenario's point file and stop");
  add_embed_job_options(cmd, a->embed);
  cmd->callback([&g, a, cmd] { run_demo(g, *cmd, *a); });
}

}  // namespace unfurl::app
