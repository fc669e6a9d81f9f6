// Internal: the streaming form of checksum64 (io/work_folder.hpp), shared by the reader that
// checks a piece and the writer that names it.
#pragma once

#include <bit>
#include <cstddef>
#include <cstdint>
#include <cstring>
#include <span>

namespace unfurl::io::detail {

// Every update but the last must pass a multiple of 32 bytes.
class Checksum {
 public:
  void update(std::span<const std::byte> bytes) {
    std::size_t i = 0;
    for (; i + 32 <= bytes.size(); i += 32)
      for (int lane = 0; lane < 4; ++lane) mix(lane, word(bytes.data() + i + 8 * lane));
    int lane = 0;
    for (; i + 8 <= bytes.size(); i += 8) mix(lane++, word(bytes.data() + i));
    if (i < bytes.size()) {
      std::uint64_t last = 0;
      std::memcpy(&last, bytes.data() + i, bytes.size() - i);
      mix(lane, last ^ 0xFF);
    }
    length_ += bytes.size();
  }
  std::uint64_t value() const {
    std::uint64_t h = length_ * kGolden;
    for (int lane = 0; lane < 4; ++lane) h = std::rotl(h ^ lanes_[lane], 23) * kOdd;
    // Final mix: splitmix64's finaliser (Steele, Lea and Flood, OOPSLA 2014).
    h ^= h >> 30;
    h *= 0xBF58476D1CE4E5B9ull;
    h ^= h >> 27;
    h *= 0x94D049BB133111EBull;
    return h ^ (h >> 31);
  }

 private:
  static constexpr std::uint64_t kGolden = 0x9E3779B97F4A7C15ull;
  static constexpr std::uint64_t kOdd = 0xD6E8FEB86659FD93ull;
  static std::uint64_t word(const std::byte* p) {
    std::uint64_t w;
    std::memcpy(&w, p, 8);
    return w;
  }
  void mix(int lane, std::uint64_t w) {
    lanes_[lane] = std::rotl(lanes_[lane] + w * kOdd, 31) * kGolden;
  }
  std::uint64_t lanes_[4] = {1, 2, 3, 4};
  std::uint64_t length_ = 0;
};

}  // namespace unfurl::io::detail
