// `unfurl plot MAP.h5 -o FIG.png`: draws one figure of a map file (PNG or SVG by extension):
// the map itself, coloured by density, by a column or dataset of a file of the input rows, or
// by each point's trustworthiness or continuity term; or one of its curves.
#include <fmt/core.h>

#include <memory>
#include <string>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "engine/error.hpp"
#include "io/atomic_output.hpp"
#include "io/plot/colour_values.hpp"
#include "io/plot/map_figures.hpp"

namespace unfurl::app {
namespace {

namespace plot = io::plot;

struct PlotArgs {
  std::string map;
  std::string output;
  std::string figure = "map";
  std::string colour_by;  // none | file | trustworthiness | continuity; default by the others
  std::string colour_file;
  std::string colour_dataset;
  std::size_t colour_column = 0;
  std::string axes = "1,2";
  std::string size;  // WIDTHxHEIGHT; empty: 900 wide, a map as high as its shape needs
};

// "W,H"-like text of two whole numbers split by `separator`; OptionError naming `option`.
std::pair<long, long> two_numbers(const std::string& option, const std::string& text,
                                  char separator, const std::string& expected) {
  const std::size_t cut = text.find(separator);
  auto number = [&](const std::string& part) {
    if (part.empty() || part.size() > 6 ||
        part.find_first_not_of("0123456789") != std::string::npos)
      throw OptionError(fmt::format("{}: expected {}, got '{}'", option, expected, text));
    return std::stol(part);
  };
  if (cut == std::string::npos)
    throw OptionError(fmt::format("{}: expected {}, got '{}'", option, expected, text));
  return {number(text.substr(0, cut)), number(text.substr(cut + 1))};
}

void run_plot(const GlobalOptions& g, const PlotArgs& a, const CLI::App& cmd) {
  const bool map_figure = a.figure == "map";
  const std::string colour_by = !a.colour_by.empty()     ? a.colour_by
                                : !a.colour_file.empty() ? "file"
                                                         : "none";
  for (const char* option :
       {"--colour-by", "--colour-file", "--colour-dataset", "--colour-column", "--axes"})
    if (!map_figure && cmd.count(option))
      throw OptionError(
          fmt::format("{}: only the map figure is coloured or has axes to choose; "
                      "--figure is {}",
                      option, a.figure));
  if (colour_by == "file" && a.colour_file.empty())
    throw OptionError("--colour-by file: needs --colour-file FILE");
  if (colour_by != "file")
    for (const char* option : {"--colour-file", "--colour-dataset", "--colour-column"})
      if (cmd.count(option))
        throw OptionError(
            fmt::format("{}: used only with --colour-by file, not {}", option, colour_by));
  const auto [width, height] = a.size.empty()
                                   ? std::pair<long, long>{900, 700}
                                   : two_numbers("--size", a.size, 'x', "WIDTHxHEIGHT in pixels");
  plot::FigureSize size{static_cast<int>(width), static_cast<int>(height)};
  if (width < 320 || width > 8000 || height < 240 || height > 8000)
    throw OptionError(
        fmt::format("--size: width must be 320 to 8000 and height 240 to 8000 "
                    "pixels, got '{}'",
                    a.size));
  const auto [ax, ay] = two_numbers("--axes", a.axes, ',', "two axis numbers such as 1,2");
  if (ax < 1 || ay < 1 || ax == ay)
    throw OptionError(fmt::format("--axes: two different axes counted from 1, got '{}'", a.axes));
  const plot::ImageFormat format = plot::image_format_for(a.output, "-o");

  io::OutputSet outputs(stop_token());
  outputs.add_input(a.map, "map");
  if (!a.colour_file.empty()) outputs.add_input(a.colour_file, "--colour-file");
  const std::size_t out = outputs.add(a.output, "-o");

  const plot::PlotMap m = plot::read_plot_map(a.map);
  std::string bytes;
  if (map_figure) {
    if (static_cast<std::size_t>(std::max(ax, ay)) > m.coords.cols)
      throw OptionError(
          fmt::format("--axes {}: the map {} has {} axes", a.axes, a.map, m.coords.cols));
    plot::PointColours colours;
    if (colour_by == "file")
      colours =
          plot::read_colour_values({a.colour_file, a.colour_dataset, a.colour_column}, m.rows);
    else if (colour_by == "trustworthiness")
      colours = plot::term_colours(m, plot::TermColour::trustworthiness);
    else if (colour_by == "continuity")
      colours = plot::term_colours(m, plot::TermColour::continuity);
    const plot::MapFigure figure = plot::map_figure(
        m, std::move(colours), static_cast<std::size_t>(ax - 1), static_cast<std::size_t>(ay - 1));
    if (a.size.empty()) size = plot::fitted_map_size(figure);
    bytes = plot::draw_map(figure, format, size);
  } else if (a.figure == "residual-variance") {
    bytes = plot::draw_curves(plot::residual_figure(m), format, size);
  } else if (a.figure == "scores") {
    bytes = plot::draw_curves(plot::scores_figure(m), format, size);
  } else {
    bytes = plot::draw_spectrum(plot::spectrum_figure(m), format, size);
  }
  outputs.write_text(out, bytes);
  outputs.commit();
  say(g,
      fmt::format("wrote {} ({} x {}, {} bytes)", a.output, size.width, size.height, bytes.size()));
}

}  // namespace

void add_plot_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand("plot", "Draw a figure of a map file (PNG or SVG)");
  auto args = std::make_shared<PlotArgs>();
  cmd->add_option("MAP", args->map, "Map file (HDF5) written by unfurl embed")->required();
  cmd->add_option("-o,--out", args->output, "Figure file to write: .png or .svg")->required();
  cmd->add_option("--figure", args->figure,
                  "What to draw: the map, residual variance against dimensions, "
                  "trustworthiness and continuity with their intervals, or the eigenvalues")
      ->check(CLI::IsMember({"map", "residual-variance", "scores", "spectrum"}))
      ->capture_default_str();
  cmd->add_option("--colour-by", args->colour_by,
                  "Colour the map's points by: nothing (density), a file of the input rows "
                  "(--colour-file), or each point's trustworthiness or continuity term "
                  "[default: file with --colour-file, else none]")
      ->check(CLI::IsMember({"none", "file", "trustworthiness", "continuity"}));
  cmd->add_option("--colour-file", args->colour_file,
                  "File with one value per input row (HDF5, CSV or NPY)");
  cmd->add_option("--colour-dataset", args->colour_dataset,
                  "HDF5 dataset in --colour-file: 1-D labels, or a 2-D table (--colour-column)");
  cmd->add_option("--colour-column", args->colour_column,
                  "Column of --colour-file to colour by, counted from 0")
      ->transform(whole_number(0, 1000000))
      ->capture_default_str();
  cmd->add_option("--axes", args->axes, "The map axes to draw, counted from 1")
      ->capture_default_str();
  cmd->add_option("--size", args->size,
                  "Figure size WIDTHxHEIGHT in pixels [default: 900x700; a map 900 wide and as "
                  "high as its shape needs]");
  cmd->callback([&g, args, cmd] {
    apply_globals(g);
    run_plot(g, *args, *cmd);
  });
}

}  // namespace unfurl::app
