#include "apps/run_record.hpp"

#include <fmt/core.h>
#include <omp.h>
#include <unistd.h>

#include "apps/log.hpp"
#include "apps/log_text.hpp"
#include "apps/run_info.hpp"

// The build's options, given by apps/CMakeLists.txt for this file alone.
#ifndef UNFURL_BUILD_TYPE
#define UNFURL_BUILD_TYPE "unknown"
#endif
#ifndef UNFURL_BUILD_NATIVE
#define UNFURL_BUILD_NATIVE 0
#endif
#ifndef UNFURL_BUILD_SANITIZE
#define UNFURL_BUILD_SANITIZE ""
#endif
#ifndef UNFURL_BUILD_BLAS
#define UNFURL_BUILD_BLAS "unknown"
#endif

extern "C" char* openblas_get_config(void);  // OpenBLAS's own: version, kernels, threading

namespace unfurl::app {
namespace {

std::vector<std::string>& arguments() {
  static std::vector<std::string> list;
  return list;
}

std::string host_name() {
  char buf[256] = {};
  if (gethostname(buf, sizeof buf - 1) != 0) return "unknown";
  return buf;
}

std::string text(const nlohmann::json& record, const char* key) {
  if (!record.contains(key)) return "?";
  const nlohmann::json& v = record[key];
  return v.is_string() ? v.get<std::string>() : v.dump();
}

double number(const nlohmann::json& record, const char* key) {
  return record.contains(key) && record[key].is_number() ? record[key].get<double>() : 0.0;
}

// Booleans come back from an HDF5 attribute as 0 or 1 (io/detail/h5_json.hpp).
bool flag(const nlohmann::json& record, const char* key, bool otherwise) {
  if (!record.contains(key)) return otherwise;
  const nlohmann::json& v = record[key];
  if (v.is_boolean()) return v.get<bool>();
  return v.is_number() ? v.get<double>() != 0 : otherwise;
}

}  // namespace

void remember_arguments(int argc, const char* const* argv) {
  arguments().assign(argv + (argc > 0 ? 1 : 0), argv + argc);
}

nlohmann::json run_record(const std::vector<std::string>& resumed_from) {
  const char* blas_config = openblas_get_config();
  nlohmann::json steps = nlohmann::json::array();
  for (const StepRecord& s : finished_steps())
    steps.push_back({{"step", s.step},
                     {"started", s.started},
                     {"seconds", s.seconds},
                     {"done", s.done},
                     {"total", s.total},
                     {"unit", unit_of(s.step)},
                     {"peak_memory_bytes", s.peak_memory_bytes},
                     {"ok", s.ok}});
  return {{"program_version", UNFURL_VERSION},
          {"build",
           {{"type", UNFURL_BUILD_TYPE},
            {"native", UNFURL_BUILD_NATIVE != 0},
            {"sanitizers", UNFURL_BUILD_SANITIZE},
            {"compiler", fmt::format("g++ {}", __VERSION__)},
            {"blas", UNFURL_BUILD_BLAS},
            {"blas_config", blas_config ? std::string(blas_config) : std::string()}}},
          {"host", host_name()},
          {"threads", omp_get_max_threads()},
          {"started", run_started_utc()},
          {"finished", utc_now_with_millis()},
          {"seconds", run_seconds()},
          {"peak_memory_bytes", peak_memory_bytes()},
          {"steps", steps},
          {"arguments", arguments()},
          {"resumed", resumed_from.empty() ? nlohmann::json(false) : nlohmann::json(resumed_from)}};
}

std::vector<std::string> run_record_lines(const nlohmann::json& r) {
  std::vector<std::string> lines;
  const nlohmann::json build =
      r.contains("build") && r["build"].is_object() ? r["build"] : nlohmann::json::object();
  const std::string sanitizers = text(build, "sanitizers");
  lines.push_back(fmt::format("unfurl {} ({} build, {}, sanitizers {}, {}), host {}, {} threads",
                              text(r, "program_version"), text(build, "type"),
                              flag(build, "native", false) ? "native" : "portable",
                              sanitizers.empty() ? "none" : sanitizers, text(build, "blas"),
                              text(r, "host"), text(r, "threads")));
  lines.push_back(
      fmt::format("started {}, finished {} ({}), peak memory {}, resumed {}", text(r, "started"),
                  text(r, "finished"), duration_text(number(r, "seconds")),
                  human_bytes(static_cast<std::uint64_t>(number(r, "peak_memory_bytes"))),
                  r.contains("resumed") && r["resumed"].is_array()
                      ? fmt::format("from {} saved pieces", r["resumed"].size())
                      : std::string(flag(r, "resumed", false) ? "yes" : "no")));
  if (r.contains("steps") && r["steps"].is_array())
    for (const nlohmann::json& s : r["steps"]) {
      StepRecord step;
      step.step = text(s, "step");
      step.seconds = number(s, "seconds");
      step.done = static_cast<std::uint64_t>(number(s, "done"));
      step.total = static_cast<std::uint64_t>(number(s, "total"));
      step.peak_memory_bytes = static_cast<std::uint64_t>(number(s, "peak_memory_bytes"));
      step.ok = flag(s, "ok", true);
      lines.push_back("step " + finished_text(step));
    }
  if (r.contains("arguments") && r["arguments"].is_array()) {
    std::string typed;
    for (const nlohmann::json& a : r["arguments"])
      typed += (typed.empty() ? "" : " ") + (a.is_string() ? a.get<std::string>() : a.dump());
    lines.push_back("arguments: " + typed);
  }
  return lines;
}

}  // namespace unfurl::app
