// csv_figure: curves from the columns of a CSV file, drawn with the project's figures
// (io/plot) for the bench scripts (bench/growth.sh, bench/landmark_study.sh). One series per
// --y column (and per value of --series-by), optional logarithmic axes, and with --fit-from X
// the least-squares slope of log y against log x over the points with x >= X of each series
// (its growth exponent), put in the series' legend text and printed one line per series.
//
// usage: csv_figure CSV -o FIG.png [-o FIG.svg ...] --x COLUMN --y SPEC [--y SPEC ...]
//          [--series-by COLUMN] [--where COLUMN=VALUE ...] [--log-x] [--log-y]
//          [--fit-from X] [--title T] [--subtitle S] [--x-label L] [--y-label L]
// SPEC is COLUMN or 1-COLUMN (one minus the value), optionally followed by ":LEGEND TEXT".
// An empty cell (or "not scored") is no point; any other cell that is not a number is refused
// naming the file, line and column. Exit codes as `unfurl`'s (apps/exit_codes.hpp).
#include <fmt/format.h>
#include <CLI/CLI.hpp>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include "apps/exit_codes.hpp"
#include "engine/error.hpp"
#include "io/atomic_output.hpp"
#include "io/detail/text_lines.hpp"
#include "io/plot/figures.hpp"

namespace {

using namespace unfurl;
namespace plot = io::plot;

struct Table {
  std::string path;
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
  std::vector<std::size_t> lines;  // file line of each row

  std::size_t column(const std::string& name, const std::string& option) const {
    for (std::size_t c = 0; c < header.size(); ++c)
      if (header[c] == name) return c;
    throw OptionError(fmt::format("{} {}: {} has no such column (columns: {})", option, name, path,
                                  fmt::join(header, ", ")));
  }
  // The cell as a number; NaN when empty or "not scored".
  double number(std::size_t row, std::size_t col) const {
    const std::string& cell = rows[row][col];
    if (cell.empty() || cell == "not scored") return NAN;
    double v = 0;
    if (io::detail::parse_number(cell, v) != io::detail::Number::ok)
      throw DataError(fmt::format("{}: line {}, column {}: '{}' is not a number", path, lines[row],
                                  header[col], io::detail::printable(cell)));
    return v;
  }
};

Table read_table(const std::string& path) {
  io::detail::LineReader reader(path);
  Table t;
  t.path = path;
  std::string_view line;
  std::vector<std::string_view> fields;
  while (reader.next(line)) {
    if (io::detail::skippable(line)) continue;
    io::detail::split_fields(line, ',', fields);
    std::vector<std::string> cells;
    for (auto f : fields) cells.emplace_back(io::detail::unquote(f));
    if (t.header.empty()) {
      t.header = std::move(cells);
      continue;
    }
    if (cells.size() != t.header.size())
      throw DataError(fmt::format("{}: line {} has {} fields, the header {}", path,
                                  reader.line_number(), cells.size(), t.header.size()));
    t.rows.push_back(std::move(cells));
    t.lines.push_back(reader.line_number());
  }
  if (t.header.empty()) throw DataError(path + ": no header line");
  return t;
}

struct Args {
  std::string csv, x, series_by, title, subtitle, x_label, y_label;
  std::vector<std::string> outputs, ys, wheres;
  bool log_x = false, log_y = false;
  double fit_from = NAN;
};

// Slope of log y on log x by least squares over the finite positive points with x >= from;
// NaN with fewer than two distinct x.
double growth_exponent(const plot::Series& s, double from, double& lo, double& hi,
                       std::size_t& used) {
  double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
  lo = INFINITY;
  hi = -INFINITY;
  for (std::size_t i = 0; i < s.x.size(); ++i) {
    if (!(s.x[i] >= from && s.x[i] > 0 && s.y[i] > 0)) continue;
    const double lx = std::log(s.x[i]), ly = std::log(s.y[i]);
    n += 1;
    sx += lx;
    sy += ly;
    sxx += lx * lx;
    sxy += lx * ly;
    lo = std::min(lo, s.x[i]);
    hi = std::max(hi, s.x[i]);
  }
  used = static_cast<std::size_t>(n);
  const double d = n * sxx - sx * sx;
  return n >= 2 && d > 1e-12 * n * sxx ? (n * sxy - sx * sy) / d : NAN;
}

void run(const Args& a) {
  std::vector<plot::ImageFormat> formats;
  for (const auto& o : a.outputs) formats.push_back(plot::image_format_for(o, "-o"));
  io::OutputSet outputs;
  outputs.add_input(a.csv, "CSV");
  std::vector<std::size_t> slots;
  for (const auto& o : a.outputs) slots.push_back(outputs.add(o, "-o"));

  const Table t = read_table(a.csv);
  const std::size_t xc = t.column(a.x, "--x");
  std::vector<std::pair<std::size_t, std::string>> filters;
  for (const auto& w : a.wheres) {
    const auto eq = w.find('=');
    if (eq == std::string::npos)
      throw OptionError(fmt::format("--where {}: expected COLUMN=VALUE", w));
    filters.emplace_back(t.column(w.substr(0, eq), "--where"), w.substr(eq + 1));
  }
  const std::size_t none = t.header.size();
  const std::size_t group_col = a.series_by.empty() ? none : t.column(a.series_by, "--series-by");
  std::vector<std::string> groups;  // in order of first appearance
  std::vector<std::size_t> kept;
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    bool keep = true;
    for (const auto& [c, v] : filters) keep = keep && t.rows[r][c] == v;
    if (!keep) continue;
    kept.push_back(r);
    const std::string g = group_col == none ? "" : t.rows[r][group_col];
    if (std::find(groups.begin(), groups.end(), g) == groups.end()) groups.push_back(g);
  }

  plot::CurveFigure f;
  f.title = a.title;
  f.subtitle = a.subtitle;
  f.x_label = a.x_label.empty() ? a.x : a.x_label;
  f.y_label = a.y_label;
  f.log_x = a.log_x;
  f.log_y = a.log_y;
  f.empty_note = "no rows to draw";
  for (const auto& spec : a.ys) {
    const auto colon = spec.find(':');
    std::string column = spec.substr(0, colon);
    const bool complement = column.rfind("1-", 0) == 0;
    if (complement) column = column.substr(2);
    const std::size_t yc = t.column(column, "--y");
    const std::string legend = colon == std::string::npos ? spec : spec.substr(colon + 1);
    for (const auto& g : groups) {
      plot::Series s;
      s.name = g.empty() ? legend : legend + ", " + g;
      for (std::size_t r : kept) {
        if (group_col != none && t.rows[r][group_col] != g) continue;
        const double y = t.number(r, yc);
        s.x.push_back(t.number(r, xc));
        s.y.push_back(complement ? 1 - y : y);
      }
      if (std::isfinite(a.fit_from)) {
        double lo = 0, hi = 0;
        std::size_t used = 0;
        const double e = growth_exponent(s, a.fit_from, lo, hi, used);
        if (std::isfinite(e)) {
          s.name += fmt::format(" (exponent {:.2f})", e);
          fmt::print("exponent {:.3f}: {}, {} points, {} = {:g} to {:g}\n", e, s.name, used, a.x,
                     lo, hi);
        }
      }
      f.series.push_back(std::move(s));
    }
  }
  if (f.y_label.empty()) f.y_label = f.series.size() == 1 ? f.series[0].name : "value";
  for (std::size_t i = 0; i < slots.size(); ++i)
    outputs.write_text(slots[i], plot::draw_curves(f, formats[i]));
  outputs.commit();
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App cli{"csv_figure: curves from the columns of a CSV file (PNG or SVG)"};
  Args a;
  cli.add_option("csv", a.csv, "CSV file with a header line")->required();
  cli.add_option("-o", a.outputs, "Figure to write, .png or .svg (repeatable)")->required();
  cli.add_option("--x", a.x, "Column of the x values")->required();
  cli.add_option("--y", a.ys, "COLUMN or 1-COLUMN, then optionally :LEGEND (repeatable)")
      ->required();
  cli.add_option("--series-by", a.series_by, "One series per value of this column");
  cli.add_option("--where", a.wheres, "Keep only rows whose COLUMN=VALUE (repeatable)");
  cli.add_flag("--log-x", a.log_x, "Logarithmic x axis");
  cli.add_flag("--log-y", a.log_y, "Logarithmic y axis");
  cli.add_option("--fit-from", a.fit_from, "Fit log y on log x over x >= this, per series");
  cli.add_option("--title", a.title, "Figure title");
  cli.add_option("--subtitle", a.subtitle, "Second title line");
  cli.add_option("--x-label", a.x_label, "x axis label (default: the column)");
  cli.add_option("--y-label", a.y_label, "y axis label");
  using app::ExitCode;
  auto fail = [](ExitCode code, const std::string& message) {
    std::fprintf(stderr, "csv_figure: %s\n", message.c_str());
    return static_cast<int>(code);
  };
  try {
    cli.parse(argc, argv);
    run(a);
  } catch (const CLI::ParseError& e) {
    const int rc = cli.exit(e);
    return rc == 0 ? 0 : static_cast<int>(ExitCode::usage);
  } catch (const Error& e) {
    return fail(app::exit_code_of(e), e.what());
  } catch (const std::exception& e) {
    return fail(ExitCode::internal, std::string("internal error: ") + e.what());
  }
  return 0;
}
