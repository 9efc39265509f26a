// SPDX-License-Identifier: MIT
#include "sigmatube/core/counter_rng.h"

#include <boost/math/special_functions/erf.hpp>
#include <cmath>

namespace sigmatube {
namespace {
constexpr std::uint32_t kPhiloxM0 = 0xD2511F53u;
constexpr std::uint32_t kPhiloxM1 = 0xCD9E8D57u;
constexpr std::uint32_t kPhiloxW0 = 0x9E3779B9u;  // golden ratio
constexpr std::uint32_t kPhiloxW1 = 0xBB67AE85u;  // sqrt(3) - 1

inline void mulhilo(std::uint32_t a, std::uint32_t b, std::uint32_t& hi, std::uint32_t& lo) {
  const std::uint64_t product = static_cast<std::uint64_t>(a) * b;
  hi = static_cast<std::uint32_t>(product >> 32);
  lo = static_cast<std::uint32_t>(product);
}
}  // namespace

std::array<std::uint32_t, 4> CounterRng::block(std::uint64_t sample, std::uint64_t block_index) const {
  std::array<std::uint32_t, 4> ctr = {static_cast<std::uint32_t>(sample), static_cast<std::uint32_t>(sample >> 32),
                                      static_cast<std::uint32_t>(block_index),
                                      static_cast<std::uint32_t>(block_index >> 32)};
  std::uint32_t k0 = static_cast<std::uint32_t>(seed_);
  std::uint32_t k1 = static_cast<std::uint32_t>(seed_ >> 32);
  for (int round = 0; round < 10; ++round) {
    std::uint32_t hi0, lo0, hi1, lo1;
    mulhilo(kPhiloxM0, ctr[0], hi0, lo0);
    mulhilo(kPhiloxM1, ctr[2], hi1, lo1);
    ctr = {hi1 ^ ctr[1] ^ k0, lo1, hi0 ^ ctr[3] ^ k1, lo0};
    k0 += kPhiloxW0;
    k1 += kPhiloxW1;
  }
  return ctr;
}

double CounterRng::uniform(std::uint64_t sample, std::uint64_t dimension) const {
  // Two dimensions share one Philox block (two 64-bit words per block).
  const auto words = block(sample, dimension / 2);
  const std::size_t w = (dimension % 2) * 2;
  const std::uint64_t bits = (static_cast<std::uint64_t>(words[w]) << 32) | words[w + 1];
  // (k + 0.5) / 2^53 lies strictly inside (0, 1).
  return (static_cast<double>(bits >> 11) + 0.5) * 0x1.0p-53;
}

double CounterRng::normal(std::uint64_t sample, std::uint64_t dimension) const {
  const double u = uniform(sample, dimension);
  return -std::sqrt(2.0) * boost::math::erfc_inv(2.0 * u);
}

}  // namespace sigmatube
