#include <cmath>
#include <limits>
#include <string>

#include "engine/error.hpp"
#include "io/detail/graph_input_format.hpp"
#include "io/detail/npy_array.hpp"
#include "io/detail/text_lines.hpp"
#include "io/graph_input.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io {
namespace {

constexpr float nan_value = std::numeric_limits<float>::quiet_NaN();

std::string text(float v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.9g", static_cast<double>(v));
  return buf;
}

std::string entry(std::size_t i, std::size_t j) {
  return "entry (" + std::to_string(i) + ", " + std::to_string(j) + ")";
}

// Distances are float32; a finite value beyond its range is an error, never clipped.
float to_float(double v, const std::string& where) {
  if (std::isfinite(v) && std::abs(v) > std::numeric_limits<float>::max())
    throw DataError(where + ": " + std::to_string(v) + " does not fit float32");
  return static_cast<float>(v);
}

struct Matrix {
  std::size_t rows = 0, cols = 0;
  std::vector<float> values;
};

Matrix read_csv(const std::filesystem::path& path, const StopToken& stop) {
  Matrix m;
  detail::LineReader lines(path);
  std::vector<std::string_view> fields;
  std::string_view line;
  char delimiter = 0;
  while (lines.next(line)) {
    if ((lines.line_number() & 0xff) == 0) stop.check("reading a distance matrix");
    if (detail::skippable(line)) continue;
    if (delimiter == 0) delimiter = detail::sniff_delimiter(line);
    detail::split_fields(line, delimiter, fields);
    const std::string where = path.string() + ": line " + std::to_string(lines.line_number());
    if (m.rows == 0) {
      m.cols = fields.size();
    } else if (fields.size() != m.cols) {
      throw DataError(where + ": has " + std::to_string(fields.size()) + " fields, earlier rows " +
                      std::to_string(m.cols));
    }
    for (std::size_t c = 0; c < fields.size(); ++c) {
      if (fields[c].empty()) {
        m.values.push_back(nan_value);  // an empty field is a missing entry
        continue;
      }
      double v = 0;
      const detail::Number parsed = detail::parse_number(fields[c], v);
      if (parsed != detail::Number::ok)
        throw DataError(where + ": field " + std::to_string(c + 1) + " '" +
                        detail::printable(fields[c]) +
                        (parsed == detail::Number::too_large ? "' lies outside the float64 range"
                                                             : "' is not a number"));
      m.values.push_back(to_float(v, where + ": field " + std::to_string(c + 1)));
    }
    ++m.rows;
    if (m.rows > m.cols)
      throw DataError(where + ": more rows than the " + std::to_string(m.cols) +
                      " columns; the matrix must be square");
  }
  return m;
}

Matrix read_npy(const std::filesystem::path& path, const StopToken& stop) {
  const std::string name = path.string();
  detail::NpyArray a = detail::open_npy(path, name);
  if (a.header.shape.size() != 2)
    throw DataError(name + ": NPY array is 1-D; a distance matrix is N x N");
  if (a.rows != a.cols)
    throw DataError(name + ": distance matrix is " + std::to_string(a.rows) + " x " +
                    std::to_string(a.cols) + ", not square");
  Matrix m{a.rows, a.cols, std::vector<float>(a.rows * a.cols)};
  detail::read_npy_rows(a, 0, a.rows, stop, name, [&](std::size_t i, std::size_t j, double v) {
    m.values[i * m.cols + j] = to_float(v, name + ": " + entry(i, j));
  });
  return m;
}

Matrix read_hdf5(const std::filesystem::path& path, const std::string& dataset,
                 const StopToken& stop) {
  H5Reader in(path, stop);
  const auto info = in.require_rank(dataset, 2);
  return {info.dims[0], info.dims[1], in.read<float>(dataset)};
}

}  // namespace

void DistanceMatrixOptions::validate() const {
  if (!(symmetry_tolerance >= 0.0) || !(symmetry_tolerance < 1.0))
    throw OptionError("DistanceMatrixOptions.symmetry_tolerance",
                      "must be in [0, 1), got " + std::to_string(symmetry_tolerance));
  if (dataset.empty() || dataset.front() != '/')
    throw OptionError("DistanceMatrixOptions.dataset",
                      "HDF5 dataset paths start with '/', got '" + dataset + "'");
  if (missing_value && std::isnan(*missing_value))
    throw OptionError("DistanceMatrixOptions.missing_value",
                      "NaN always marks a missing entry; give another value or none");
}

PartialDistances read_partial_distances(const std::filesystem::path& path,
                                        const DistanceMatrixOptions& o) {
  o.validate();
  Matrix m;
  switch (detail::resolve_format(o.format, path)) {
    case GraphInputFormat::hdf5:
      m = read_hdf5(path, o.dataset, o.stop);
      break;
    case GraphInputFormat::npy:
      m = read_npy(path, o.stop);
      break;
    default:
      m = read_csv(path, o.stop);
  }
  const std::string where =
      path.string() + (detail::resolve_format(o.format, path) == GraphInputFormat::hdf5
                           ? ": " + o.dataset
                           : std::string());
  if (m.rows != m.cols)
    throw DataError(where + ": distance matrix is " + std::to_string(m.rows) + " x " +
                    std::to_string(m.cols) + ", not square");
  const std::size_t n = m.rows;
  std::vector<float>& d = m.values;
  // Missing entries become NaN; everything else must be a finite distance.
  const bool has_sentinel = o.missing_value.has_value();
  const float sentinel = has_sentinel ? static_cast<float>(*o.missing_value) : 0.0f;
  for (std::size_t i = 0; i < n; ++i) {
    if ((i & 0xff) == 0) o.stop.check("checking a distance matrix");
    for (std::size_t j = 0; j < n; ++j) {
      float& v = d[i * n + j];
      if (std::isnan(v) || (has_sentinel && v == sentinel)) {
        v = nan_value;
        continue;
      }
      if (!std::isfinite(v))
        throw DataError(where + ": " + entry(i, j) + " = " + text(v) + " is not finite");
      if (v < 0) throw DataError(where + ": " + entry(i, j) + " = " + text(v) + " is negative");
    }
    float& diag = d[i * n + i];
    if (std::isnan(diag)) diag = 0.0f;  // a point's distance to itself needs no measuring
    if (diag != 0.0f)
      throw DataError(where + ": diagonal " + entry(i, i) + " = " + text(diag) + ", must be 0");
  }
  PartialDistances out;
  out.n = n;
  for (std::size_t i = 0; i < n; ++i) {
    if ((i & 0xff) == 0) o.stop.check("checking a distance matrix");
    for (std::size_t j = i + 1; j < n; ++j) {
      const float a = d[i * n + j], b = d[j * n + i];
      const bool missing_a = std::isnan(a), missing_b = std::isnan(b);
      if (missing_a && missing_b) {
        ++out.missing_pairs;
        continue;
      }
      if (missing_a != missing_b)
        throw DataError(where + ": not symmetric: " + entry(i, j) + " = " +
                        (missing_a ? "missing" : text(a)) + " but " + entry(j, i) + " = " +
                        (missing_b ? "missing" : text(b)));
      if (std::abs(a - b) > o.symmetry_tolerance * std::max(a, b))
        throw DataError(where + ": not symmetric: " + entry(i, j) + " = " + text(a) + " but " +
                        entry(j, i) + " = " + text(b));
      d[j * n + i] = a;
    }
  }
  out.values = std::move(d);
  return out;
}

}  // namespace unfurl::io
