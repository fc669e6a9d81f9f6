#include "io/csv_writer.hpp"

#include <charconv>
#include <cstdio>
#include <cstring>
#include <memory>

#include "engine/error.hpp"
#include "io/atomic_output.hpp"

namespace unfurl::io {
namespace {

struct FileCloser {
  void operator()(std::FILE* f) const { std::fclose(f); }
};

// Collects text in a buffer and hands it to stdio in large pieces.
class Sink {
 public:
  Sink(std::FILE* f, const std::filesystem::path& where) : file_(f), where_(where) {}
  void put(const char* s, std::size_t n) {
    if (used_ + n > sizeof buf_) flush();
    std::memcpy(buf_ + used_, s, n);
    used_ += n;
  }
  void put(char c) { put(&c, 1); }
  template <class T>
  void number(T v) {
    char text[48];
    const auto r = std::to_chars(text, text + sizeof text, v);  // shortest round trip
    put(text, static_cast<std::size_t>(r.ptr - text));
  }
  void flush() {
    if (used_ && std::fwrite(buf_, 1, used_, file_) != used_)
      throw IoError(where_.string() + ": write failed: " + std::strerror(errno));
    used_ = 0;
  }

 private:
  std::FILE* file_;
  const std::filesystem::path& where_;
  char buf_[1 << 16];
  std::size_t used_ = 0;
};

bool needs_quotes(const std::string& s) {
  return s.find_first_of(",\"\n\r") != std::string::npos;
}

void put_field(Sink& out, const std::string& s) {
  if (!needs_quotes(s)) return out.put(s.data(), s.size());
  out.put('"');
  for (char c : s) {
    if (c == '"') out.put('"');
    out.put(c);
  }
  out.put('"');
}

}  // namespace

void write_coordinates_csv(const std::filesystem::path& path, const PointSet& coords,
                           std::span<const std::int64_t> rows,
                           const std::vector<std::string>& names) {
  OutputSet outputs;
  write_coordinates_csv(outputs, outputs.add(path), coords, rows, names);
  outputs.commit();
}

void write_coordinates_csv(OutputSet& outputs, std::size_t output, const PointSet& coords,
                           std::span<const std::int64_t> rows,
                           const std::vector<std::string>& names) {
  const std::filesystem::path& path = outputs.path(output);
  if (rows.size() != coords.rows || coords.values.size() != coords.rows * coords.cols)
    throw InternalError(path.string() + ": " + std::to_string(rows.size()) + " row indices for " +
                        std::to_string(coords.rows) + " points");
  if (!names.empty() && names.size() != coords.cols)
    throw InternalError(path.string() + ": " + std::to_string(names.size()) + " column names for " +
                        std::to_string(coords.cols) + " columns");
  outputs.write(output, [&](const std::filesystem::path& temp) {
    std::unique_ptr<std::FILE, FileCloser> file(std::fopen(temp.c_str(), "wb"));
    if (!file) throw OutputError(temp.string() + ": cannot create: " + std::strerror(errno));
    auto sink = std::make_unique<Sink>(file.get(), temp);
    sink->put("row", 3);
    for (std::size_t c = 0; c < coords.cols; ++c) {
      sink->put(',');
      if (names.empty()) {
        sink->put('x');
        sink->number(c + 1);
      } else {
        put_field(*sink, names[c]);
      }
    }
    sink->put('\n');
    for (std::size_t i = 0; i < coords.rows; ++i) {
      sink->number(rows[i]);
      const float* r = coords.row(i);
      for (std::size_t c = 0; c < coords.cols; ++c) {
        sink->put(',');
        sink->number(r[c]);
      }
      sink->put('\n');
    }
    sink->flush();
    if (std::fflush(file.get()) != 0 || std::ferror(file.get()))
      throw IoError(temp.string() + ": write failed: " + std::strerror(errno));
    if (std::fclose(file.release()) != 0)
      throw IoError(temp.string() + ": write failed: " + std::strerror(errno));
  });
}

}  // namespace unfurl::io
