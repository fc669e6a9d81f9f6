// The memory guard of the embed job (embed and demo): the engine's estimate of the run's
// peak (engine/memory_estimate.hpp) against --max-memory or, without it, the system's
// ceiling (apps/memory_limit.hpp), checked before any work; a run over it is refused with a
// ResourceError (exit 69) naming the estimate, the limit and what to change.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>

#include <nlohmann/json.hpp>

#include "apps/embed_job.hpp"
#include "engine/memory_estimate.hpp"

namespace unfurl::app {

struct MemoryLimit {
  std::uint64_t bytes = 0;
  std::string source;  // "--max-memory", or where the system ceiling came from
};
// --max-memory when given (parsed as typed), else system_memory_ceiling().
MemoryLimit memory_limit(const std::string& max_memory);

// The estimate's shape for the job on an input of `size` (embed_job.hpp), options as the job
// resolved them, with the threads the run will use.
MemoryShape job_memory_shape(const EmbedArgs& args, const EmbedOptions& options,
                             const JobSize& size);

// The estimate, after refusing it when its peak is over the limit: ResourceError, one line,
// "memory: the run would need about 1.2 GiB at its peak (step rows: landmark rows 256 x N
// float32) for 1000000 points, over the limit of 800.0 MiB (--max-memory); use fewer
// landmarks (--landmarks), fewer rows (--rows A:B), more ranks or machines, or raise
// --max-memory".
// `subject` names the size in the message ("--point-count 5000"); empty: "N points" (or nodes).
MemoryEstimate check_memory(const MemoryShape& shape, const MemoryLimit& limit,
                            const std::string& subject = "");

// The estimate and the limit for the run's JSON report ("memory_estimate").
nlohmann::json memory_json(const MemoryEstimate& estimate, const MemoryLimit& limit);

// Rows and columns of a point file known from its metadata alone (HDF5 dataset shape, NPY
// header), after --rows; nothing for text files or when the file cannot be described (the
// reader then says why).
std::optional<std::pair<std::size_t, std::size_t>> point_file_shape(const PointInputArgs& input);

}  // namespace unfurl::app
