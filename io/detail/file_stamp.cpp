#include "io/detail/file_stamp.hpp"

#include <sys/resource.h>
#include <unistd.h>

#include <chrono>

#include "engine/error.hpp"

namespace unfurl::io::detail {
namespace {

std::string host_name() {
  char buf[256] = {};
  if (::gethostname(buf, sizeof buf - 1) != 0) return "unknown";
  return buf;
}

std::int64_t peak_memory_bytes() {
  rusage usage{};
  if (::getrusage(RUSAGE_SELF, &usage) != 0) return -1;
  return static_cast<std::int64_t>(usage.ru_maxrss) * 1024;  // Linux reports KiB
}

}  // namespace

std::string iso8601_utc(std::time_t t) {
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf;
}

nlohmann::json stamp_attributes(nlohmann::json attrs, std::int64_t format_version) {
  if (attrs.is_null()) attrs = nlohmann::json::object();
  attrs["format_version"] = format_version;
  attrs["program_version"] = UNFURL_VERSION;
  if (!attrs.contains("creation_time"))
    attrs["creation_time"] =
        iso8601_utc(std::chrono::system_clock::to_time_t(std::chrono::system_clock::now()));
  if (!attrs.contains("host")) attrs["host"] = host_name();
  if (!attrs.contains("peak_memory_bytes")) attrs["peak_memory_bytes"] = peak_memory_bytes();
  return attrs;
}

std::int64_t check_format_version(const H5Reader& in, std::int64_t newest, const char* what) {
  const std::string file = in.path().string();
  if (!in.has_attribute("/", "format_version"))
    throw DataError(file + ": /: no format_version attribute (not an unfurl " + what + "?)");
  if (in.attribute_kind("/", "format_version") != H5Kind::integer)
    throw DataError(file + ": /: format_version is not an integer");
  const std::int64_t v = in.int_attribute("/", "format_version");
  if (v > newest)
    throw DataError(file + ": written by a newer unfurl: format version " + std::to_string(v) +
                    ", this reads up to " + std::to_string(newest));
  if (v < 1) throw DataError(file + ": /: invalid format version " + std::to_string(v));
  return v;
}

}  // namespace unfurl::io::detail
