// Internal: the names of work-folder pieces (io/work_folder.hpp), STEP.CHECKSUM.h5, shared by
// the folder, which finds pieces, and its writer, which names them.
#pragma once

#include <algorithm>
#include <cstdint>
#include <cstdio>
#include <string>

namespace unfurl::io::detail {

// 16 lower-case hex digits.
inline std::string hex16(std::uint64_t v) {
  char text[17];
  std::snprintf(text, sizeof text, "%016llx", static_cast<unsigned long long>(v));
  return text;
}

// "STEP.CHECKSUM.h5" -> STEP and CHECKSUM, or false for any other name.
inline bool split_piece_name(const std::string& name, std::string& step, std::string& sum) {
  if (name.size() < 21 || name.compare(name.size() - 3, 3, ".h5") != 0) return false;
  const std::size_t dot = name.size() - 20;
  if (name[dot] != '.') return false;
  sum = name.substr(dot + 1, 16);
  if (!std::all_of(sum.begin(), sum.end(),
                   [](char c) { return (c >= '0' && c <= '9') || (c >= 'a' && c <= 'f'); }))
    return false;
  step = name.substr(0, dot);
  return true;
}

}  // namespace unfurl::io::detail
