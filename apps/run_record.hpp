// The run record: how and where a run was made, stored in every map written by `embed` and
// `demo` (the attribute "run" on "/", io/map_record.hpp's JSON attribute rules) and in the
// run's JSON report (key "run"); `unfurl inspect MAP.h5` shows it. Members:
//   program_version   unfurl's version
//   build             {type, native, sanitizers, compiler, blas (as configured), blas_config
//                     (OpenBLAS's own description, kernels chosen at run time)}
//   host, threads     the machine's name and the OpenMP threads the run could use
//   started, finished UTC, ISO 8601 with milliseconds: the process start, and the moment the
//                     record was made (just before the outputs are written)
//   seconds, peak_memory_bytes  wall time until then, the process's resident high-water mark
//   steps             one object per step: step, started, seconds, done, total (units; 0:
//                     not known ahead), unit, peak_memory_bytes (highest resident size seen
//                     during the step, sampled every 0.1 s and at both ends), ok
//   arguments         the command line as typed, after the program name
//   resumed           false for a run from scratch, else the names of the saved pieces of the
//                     work folder the run took back instead of computing them
// The input's identity and every parameter sit beside it, in the attributes (and report keys)
// "input", "parameters" and "seed".
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace unfurl::app {

// Keeps the command line for the record; main() calls it first.
void remember_arguments(int argc, const char* const* argv);

nlohmann::json run_record(const std::vector<std::string>& resumed_from = {});

// The record as lines for `inspect` ("unfurl 0.1.0 (Release, portable, ...)", one per step).
std::vector<std::string> run_record_lines(const nlohmann::json& record);

}  // namespace unfurl::app
