#include <cmath>
#include <limits>
#include <string>

#include "engine/error.hpp"
#include "io/detail/graph_input_format.hpp"
#include "io/detail/npy_matrix.hpp"
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

struct Matrix {
  std::size_t rows = 0, cols = 0;
  std::vector<float> values;
};

Matrix read_csv(const std::filesystem::path& path, const StopToken& stop) {
  Matrix m;
  detail::LineReader lines(path);
  std::vector<std::string_view> fields;
  std::string_view line;
  while (lines.next(line)) {
    if ((lines.line_number() & 0xff) == 0) stop.check("reading a distance matrix");
    if (detail::skippable(line)) continue;
    detail::split_fields(line, fields);
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
      const auto v = detail::parse_double(fields[c]);
      if (!v)
        throw DataError(where + ": field " + std::to_string(c + 1) + " '" + std::string(fields[c]) +
                        "' is not a number");
      if (std::isfinite(*v) && std::abs(*v) > std::numeric_limits<float>::max())
        throw DataError(where + ": field " + std::to_string(c + 1) + " does not fit float32");
      m.values.push_back(static_cast<float>(*v));
    }
    ++m.rows;
    if (m.rows > m.cols)
      throw DataError(where + ": more rows than the " + std::to_string(m.cols) +
                      " columns; the matrix must be square");
  }
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
    throw OptionError("--symmetry-tolerance: must be in [0, 1), got " +
                      std::to_string(symmetry_tolerance));
  if (dataset.empty() || dataset.front() != '/')
    throw OptionError("--dataset: HDF5 dataset paths start with '/', got '" + dataset + "'");
  if (missing_value && std::isnan(*missing_value))
    throw OptionError("--missing: NaN always marks a missing entry; give another value or none");
}

PartialDistances read_partial_distances(const std::filesystem::path& path,
                                        const DistanceMatrixOptions& o) {
  o.validate();
  Matrix m;
  switch (detail::resolve_format(o.format, path)) {
    case GraphInputFormat::hdf5:
      m = read_hdf5(path, o.dataset, o.stop);
      break;
    case GraphInputFormat::npy: {
      auto npy = detail::read_npy_matrix(path);
      m = {npy.rows, npy.cols, std::move(npy.values)};
      break;
    }
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
