// A small portable seeded shuffle: same seed, same order on every platform and library.
#pragma once

#include <cstdint>
#include <span>
#include <utility>

namespace credence::data {

/// SplitMix64 (a 64-bit mixing generator, public domain, common practice for seeding):
/// advances `state` and returns 64 random bits.
inline std::uint64_t next_bits(std::uint64_t& state) {
  std::uint64_t z = (state += 0x9E3779B97F4A7C15ull);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

/// The shuffle state of epoch `epoch` of an iterator seeded with `seed`, so that any
/// epoch's order can be rebuilt without replaying the ones before it:
///   s = seed;  a = next_bits(s);                      // one SplitMix64 step of the seed
///   t = a ^ ((epoch + 1) * 0x9E3779B97F4A7C15);       // wrapping 64-bit product
///   return next_bits(t);                              // one SplitMix64 step of that
/// (the same mix as util/rng.h's mix_seed, written out here so the data module stands alone).
inline std::uint64_t epoch_shuffle_state(std::uint64_t seed, std::uint64_t epoch) {
  std::uint64_t s = seed;
  std::uint64_t t = next_bits(s) ^ ((epoch + 1) * 0x9E3779B97F4A7C15ull);
  return next_bits(t);
}

/// Uniform integer in [0, bound) without modulo bias (rejection on the low range).
/// REQUIRES: bound >= 1.
inline std::uint64_t uniform_below(std::uint64_t& state, std::uint64_t bound) {
  const std::uint64_t limit = -bound % bound;  // 2^64 mod bound
  while (true) {
    const std::uint64_t bits = next_bits(state);
    if (bits >= limit) return bits % bound;
  }
}

/// Fisher-Yates shuffle; std::shuffle's order differs between standard libraries.
template <typename T>
void shuffle_in_place(std::span<T> items, std::uint64_t& state) {
  for (std::size_t i = items.size(); i > 1; --i) {
    const auto j = static_cast<std::size_t>(uniform_below(state, i));
    std::swap(items[i - 1], items[j]);
  }
}

}  // namespace credence::data
