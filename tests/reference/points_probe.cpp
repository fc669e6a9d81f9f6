// Reads a point file with io::read_points and dumps it for tests/reference/points_io_check.py:
//   points_probe FILE OUT [--dataset D] [--rows A:B] [--format F] [--drop-nonfinite]
// OUT: uint64 rows, uint64 cols (little-endian), rows*cols float32 values row-major, then
// rows int64 input row indices, cols float64 column centres (subtracted before narrowing). Errors:
// the message on stderr, the project's exit code.
#include <cstdint>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <string>

#include "apps/exit_codes.hpp"
#include "engine/error.hpp"
#include "io/points_reader.hpp"

int main(int argc, char** argv) {
  if (argc < 3) {
    std::cerr << "usage: points_probe FILE OUT [--dataset D] [--rows A:B] [--format F] "
                 "[--drop-nonfinite]\n";
    return 64;
  }
  try {
    unfurl::io::PointReadOptions options;
    for (int i = 3; i < argc; ++i) {
      const std::string arg = argv[i];
      const bool has_value = i + 1 < argc;
      if (arg == "--dataset" && has_value)
        options.dataset = argv[++i];
      else if (arg == "--rows" && has_value)
        options.rows = unfurl::io::parse_row_range(argv[++i]);
      else if (arg == "--format" && has_value)
        options.format = argv[++i];
      else if (arg == "--drop-nonfinite")
        options.drop_nonfinite = true;
      else
        throw unfurl::OptionError("unknown argument " + arg);
    }
    const auto result = unfurl::io::read_points(argv[1], options);
    std::ofstream out(argv[2], std::ios::binary);
    const std::uint64_t shape[2] = {result.points.rows, result.points.cols};
    out.write(reinterpret_cast<const char*>(shape), sizeof shape);
    out.write(reinterpret_cast<const char*>(result.points.values.data()),
              static_cast<std::streamsize>(result.points.values.size() * sizeof(float)));
    out.write(reinterpret_cast<const char*>(result.rows.data()),
              static_cast<std::streamsize>(result.rows.size() * sizeof(std::int64_t)));
    out.write(reinterpret_cast<const char*>(result.centres.data()),
              static_cast<std::streamsize>(result.centres.size() * sizeof(double)));
    if (!out) {
      std::cerr << "points_probe: cannot write " << argv[2] << "\n";
      return 73;
    }
  } catch (const unfurl::Error& e) {
    std::cerr << "points_probe: " << e.what() << "\n";
    return static_cast<int>(unfurl::app::exit_code_of(e));
  }
  return 0;
}
