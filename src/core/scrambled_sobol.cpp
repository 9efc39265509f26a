// SPDX-License-Identifier: MIT
#include "sigmatube/core/scrambled_sobol.h"

#include <boost/math/special_functions/erf.hpp>
#include <boost/random/sobol.hpp>

#include <cmath>
#include <stdexcept>
#include <string>

#include "sigmatube/core/counter_rng.h"

namespace sigmatube {
namespace {

using Engine = boost::random::sobol_engine<std::uint32_t, 32, boost::random::default_sobol_table>;

std::uint32_t reverse_bits(std::uint32_t x) {
  x = ((x >> 1) & 0x55555555u) | ((x & 0x55555555u) << 1);
  x = ((x >> 2) & 0x33333333u) | ((x & 0x33333333u) << 2);
  x = ((x >> 4) & 0x0F0F0F0Fu) | ((x & 0x0F0F0F0Fu) << 4);
  x = ((x >> 8) & 0x00FF00FFu) | ((x & 0x00FF00FFu) << 8);
  return (x >> 16) | (x << 16);
}

// Burley (2020), listing 1 (constants of his improved Laine–Karras hash): each
// output bit depends on the key and on the input bits below it only.
std::uint32_t laine_karras_permutation(std::uint32_t x, std::uint32_t key) {
  x += key;
  x ^= x * 0x6c50b47cu;
  x ^= x * 0xb82f1e52u;
  x ^= x * 0xc7afe638u;
  x ^= x * 0x8d22f6e6u;
  return x;
}

// Nested uniform scramble: after bit reversal, "below" means "more significant".
std::uint32_t nested_uniform_scramble(std::uint32_t x, std::uint32_t key) {
  return reverse_bits(laine_karras_permutation(reverse_bits(x), key));
}

constexpr int kMaxDimension = 64;

}  // namespace

int ScrambledSobol::max_dimension() { return kMaxDimension; }

ScrambledSobol::ScrambledSobol(int dimension, std::uint64_t seed, std::uint64_t replicate) : dimension_(dimension) {
  if (dimension < 1 || dimension > kMaxDimension)
    throw std::invalid_argument("ScrambledSobol: dimension must be 1 … " + std::to_string(kMaxDimension));
  // One key per (replicate, dimension) from the counter-based generator.
  const CounterRng rng(seed);
  for (int j = 0; j < dimension; ++j) keys_[j] = rng.block(replicate, static_cast<std::uint64_t>(j))[0];
}

void ScrambledSobol::uniforms(std::uint64_t first, std::size_t count, double* u) const {
  if (count == 0) return;
  if (first > 0xFFFFFFFFull - count) throw std::out_of_range("ScrambledSobol: more than 2^32 points");
  // Boost's engine leaves out the sequence's point 0 (the origin): after seed(k)
  // it yields point k + 1. Point 0 is put back here, so that the first 2^m points
  // are the whole net.
  Engine engine(static_cast<std::size_t>(dimension_));
  engine.seed(static_cast<std::uint32_t>(first == 0 ? 0 : first - 1));
  constexpr double kScale = 1.0 / 4294967296.0;
  for (std::size_t k = 0; k < count; ++k)
    for (int j = 0; j < dimension_; ++j) {
      const std::uint32_t raw = first + k == 0 ? 0u : engine();
      const std::uint32_t x = nested_uniform_scramble(raw, keys_[j]);
      u[k * static_cast<std::size_t>(dimension_) + static_cast<std::size_t>(j)] = (static_cast<double>(x) + 0.5) * kScale;
    }
}

void ScrambledSobol::normals(std::uint64_t first, std::size_t count, double* z) const {
  uniforms(first, count, z);
  const std::size_t n = count * static_cast<std::size_t>(dimension_);
  for (std::size_t k = 0; k < n; ++k) z[k] = -std::sqrt(2.0) * boost::math::erfc_inv(2.0 * z[k]);
}

}  // namespace sigmatube
