// SPDX-License-Identifier: MIT
#pragma once
// Counter-based random numbers: the value drawn for (seed, sample, dimension)
// depends on those three integers only, never on the order of draws or on the
// thread or rank that asks. Philox-4x32-10 of Salmon, Moraes, Dror & Shaw,
// "Parallel random numbers: as easy as 1, 2, 3", SC'11 (2011).
#include <array>
#include <cstdint>

// Layer core/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube {

class CounterRng {
 public:
  explicit CounterRng(std::uint64_t seed) : seed_(seed) {}

  /// Four 32-bit words for the counter (sample, block).
  std::array<std::uint32_t, 4> block(std::uint64_t sample, std::uint64_t block_index) const;

  /// Uniform on the open interval (0, 1) for (sample, dimension): never 0 or 1,
  /// so quantile functions can take it directly. 53-bit resolution.
  double uniform(std::uint64_t sample, std::uint64_t dimension) const;

  /// Standard normal for (sample, dimension), by the inverse normal CDF of uniform().
  double normal(std::uint64_t sample, std::uint64_t dimension) const;

  std::uint64_t seed() const { return seed_; }

 private:
  std::uint64_t seed_;
};

}  // namespace sigmatube
