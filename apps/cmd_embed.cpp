// `unfurl embed POINTS -o MAP.h5`: the main job, from a point file to a scored map file.
#include <fmt/core.h>

#include <memory>

#include "apps/embed_job.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {

void add_embed_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand("embed", "Unfold points into a map that follows their geodesics");
  auto args = std::make_shared<EmbedArgs>();
  add_point_input(cmd, args->input, "POINTS");
  cmd->add_option("-o,--out", args->output, "Map file to write (HDF5)")->required();
  add_embed_job_options(cmd, *args);
  cmd->callback([&g, args] {
    apply_globals(g);
    check_outputs(*args);
    const io::PointReadResult in = io::read_points(args->input.file, to_read_options(args->input));
    say(g, fmt::format("points: {} rows x {} columns from {}{} ({:.2f} s)", in.points.rows,
                       in.points.cols, args->input.file, in.dataset.empty() ? "" : ":" + in.dataset,
                       in.read_seconds));
    if (!in.dropped_rows.empty())
      say(g, fmt::format("points: {} rows with non-finite values dropped", in.dropped_rows.size()));
    run_embed_job(g, *args, in, io::input_identity(args->input.file, in.dataset));
  });
}

}  // namespace unfurl::app
