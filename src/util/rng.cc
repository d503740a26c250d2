// xoshiro256++ lanes, splitmix64 seeding and a vectorisable Box-Muller normal generator.
#include "util/rng.h"

#include <bit>
#include <cmath>
#include <cstring>
#include <numbers>

namespace credence {
namespace {

inline std::uint64_t rotl(std::uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

// One xoshiro256++ step on state s (four words).
inline std::uint64_t xoshiro_next(std::uint64_t& s0, std::uint64_t& s1, std::uint64_t& s2,
                                  std::uint64_t& s3) {
  const std::uint64_t result = rotl(s0 + s3, 23) + s0;
  const std::uint64_t t = s1 << 17;
  s2 ^= s0;
  s3 ^= s1;
  s1 ^= s2;
  s0 ^= s3;
  s2 ^= t;
  s3 = rotl(s3, 45);
  return result;
}

// ln(u) for u in (0, 1]: u = 2^e m with m in [sqrt(1/2), sqrt(2)), then
// ln m = 2 atanh(s), s = (m - 1)/(m + 1), |s| < 0.172, by its odd series to s^9
// (truncation error below 3e-10). Plain float code so the block loop vectorises.
inline float log_unit(float u) {
  std::uint32_t bits = std::bit_cast<std::uint32_t>(u);
  int e = static_cast<int>(bits >> 23) - 127;
  float m = std::bit_cast<float>((bits & 0x007FFFFFu) | 0x3F800000u);  // [1, 2)
  const bool high = m > std::numbers::sqrt2_v<float>;
  m = high ? m * 0.5f : m;
  e = high ? e + 1 : e;
  const float s = (m - 1.0f) / (m + 1.0f);
  const float s2 = s * s;
  const float series = 1.0f + s2 * (1.0f / 3 + s2 * (1.0f / 5 + s2 * (1.0f / 7 + s2 * (1.0f / 9))));
  return static_cast<float>(e) * std::numbers::ln2_v<float> + 2.0f * s * series;
}

// sin and cos of phi in [0, pi/2] by Taylor series to degree 11 / 12
// (truncation error below 6e-8).
inline void sincos_quarter(float phi, float& s, float& c) {
  const float x2 = phi * phi;
  s = phi *
      (1.0f + x2 * (-1.0f / 6 +
                    x2 * (1.0f / 120 +
                          x2 * (-1.0f / 5040 + x2 * (1.0f / 362880 + x2 * (-1.0f / 39916800))))));
  c = 1.0f +
      x2 * (-0.5f + x2 * (1.0f / 24 + x2 * (-1.0f / 720 +
                                            x2 * (1.0f / 40320 + x2 * (-1.0f / 3628800 +
                                                                       x2 * (1.0f / 479001600))))));
}

// sqrt(x) for x > 0 as x / sqrt(x) with the classic bit-level first guess and three
// Newton steps (relative error below 1e-7). Plain arithmetic: std::sqrt's errno path
// would stop the block loop from vectorising.
inline float sqrt_positive(float x) {
  float y = std::bit_cast<float>(0x5F3759DFu - (std::bit_cast<std::uint32_t>(x) >> 1));
  for (int i = 0; i < 3; ++i) y = y * (1.5f - 0.5f * x * y * y);
  return x * y;
}

}  // namespace

std::uint64_t splitmix64(std::uint64_t& x) {
  std::uint64_t z = (x += 0x9E3779B97F4A7C15ull);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

std::uint64_t mix_seed(std::uint64_t run_seed, std::uint64_t index) {
  std::uint64_t x = run_seed;
  std::uint64_t y = splitmix64(x) ^ ((index + 1) * 0x9E3779B97F4A7C15ull);
  return splitmix64(y);
}

std::uint64_t stream_seed(std::uint64_t seed, SeedPurpose purpose, std::uint64_t chain) {
  return mix_seed(mix_seed(seed, static_cast<std::uint64_t>(purpose)), chain);
}

void Rng::reseed(std::uint64_t seed) {
  std::uint64_t x = seed;
  for (int l = 0; l < kLanes; ++l) {
    for (int w = 0; w < 4; ++w)
      lanes_[static_cast<std::size_t>(w)][static_cast<std::size_t>(l)] = splitmix64(x);
  }
  for (auto& word : scalar_) word = splitmix64(x);
}

std::uint64_t Rng::next_u64() {
  return xoshiro_next(scalar_[0], scalar_[1], scalar_[2], scalar_[3]);
}

double Rng::uniform() { return static_cast<double>(next_u64() >> 11) * 0x1.0p-53; }

double Rng::exponential() {
  // 1 - uniform() lies in (0, 1], so the log is finite.
  return -std::log(1.0 - uniform());
}

double Rng::normal() {
  const double u1 = 1.0 - uniform();
  const double u2 = uniform();
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
}

void Rng::normal_block(float* out) {
  alignas(64) std::uint64_t bits[kLanes];
  auto& s0 = lanes_[0];
  auto& s1 = lanes_[1];
  auto& s2 = lanes_[2];
  auto& s3 = lanes_[3];
  for (int l = 0; l < kLanes; ++l) {
    bits[l] = xoshiro_next(s0[static_cast<std::size_t>(l)], s1[static_cast<std::size_t>(l)],
                           s2[static_cast<std::size_t>(l)], s3[static_cast<std::size_t>(l)]);
  }
  for (int l = 0; l < kLanes; ++l) {
    // High 24 bits -> radius uniform in (0, 1); low word -> quadrant (2 bits) and
    // position inside it (22 bits), centred so neither end is hit exactly.
    const auto hi = static_cast<std::uint32_t>(bits[l] >> 40);
    const auto lo = static_cast<std::uint32_t>(bits[l]);
    const float u1 = static_cast<float>(hi) * 0x1.0p-24f + 0x1.0p-25f;
    const std::uint32_t q = lo >> 30;
    const float f = static_cast<float>((lo >> 8) & 0x3FFFFFu) * 0x1.0p-22f + 0x1.0p-23f;
    const float r = sqrt_positive(-2.0f * log_unit(u1));
    float s, c;
    sincos_quarter(f * (std::numbers::pi_v<float> / 2), s, c);
    // Rotate (c, s) by q quarter turns.
    const bool swap = (q & 1u) != 0;
    const float x = swap ? s : c;
    const float y = swap ? c : s;
    const float x_sign = (((q + 1u) >> 1) & 1u) != 0 ? -1.0f : 1.0f;
    const float y_sign = (q >> 1) != 0 ? -1.0f : 1.0f;
    out[l] = r * x * x_sign;
    out[l + kLanes] = r * y * y_sign;
  }
}

void Rng::fill_normal(std::span<float> out) {
  constexpr std::size_t kBlock = 2 * kLanes;
  const std::size_t full = out.size() / kBlock * kBlock;
  for (std::size_t i = 0; i < full; i += kBlock) normal_block(out.data() + i);
  if (full < out.size()) {
    alignas(64) float tail[kBlock];
    normal_block(tail);
    std::memcpy(out.data() + full, tail, (out.size() - full) * sizeof(float));
  }
}

std::vector<std::uint64_t> Rng::state() const {
  std::vector<std::uint64_t> words;
  words.reserve(kStateWords);
  for (const auto& w : lanes_) words.insert(words.end(), w.begin(), w.end());
  words.insert(words.end(), scalar_.begin(), scalar_.end());
  return words;
}

bool Rng::set_state(std::span<const std::uint64_t> words) {
  if (words.size() != kStateWords) return false;
  for (int l = 0; l <= kLanes; ++l) {
    std::uint64_t any = 0;
    for (int w = 0; w < 4; ++w) {
      any |= l < kLanes ? words[static_cast<std::size_t>(w * kLanes + l)]
                        : words[static_cast<std::size_t>(4 * kLanes + w)];
    }
    if (any == 0) return false;  // xoshiro's one forbidden state
  }
  std::size_t k = 0;
  for (auto& w : lanes_) {
    for (auto& word : w) word = words[k++];
  }
  for (auto& word : scalar_) word = words[k++];
  return true;
}

}  // namespace credence
