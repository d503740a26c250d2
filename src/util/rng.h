// Seeded random numbers for the samplers: xoshiro256++ bits and bulk standard normals.
//
// One Rng belongs to one chain; it is not safe to share between threads. Its whole
// state is a short list of 64-bit words (state() / set_state()), so a checkpoint can
// resume a chain bit for bit. Streams depend only on the seed, never on threads.
//
//   Rng rng(stream_seed(run_seed, SeedPurpose::kSampler, chain));
//   rng.fill_normal(noise);          // noise: std::span<float>, N(0, 1) draws
//   double u = rng.uniform();        // [0, 1)
#pragma once

#include <array>
#include <cstdint>
#include <span>
#include <vector>

namespace credence {

/// One step of splitmix64 ("Fast splittable pseudorandom number generators",
/// OOPSLA 2014): advances `x` and returns a well-mixed 64-bit word.
std::uint64_t splitmix64(std::uint64_t& x);

/// Seed of stream `index` of a run: splitmix64 applied to run_seed, then to the
/// result xor (index + 1) * 0x9E3779B97F4A7C15. Chain c of a run always gets the
/// same seed, whatever the number of threads.
std::uint64_t mix_seed(std::uint64_t run_seed, std::uint64_t index);

/// What a per-chain random stream is for. Each purpose has its own value, so no two
/// streams of a run share a seed; add new purposes at the end, never renumber.
enum class SeedPurpose : std::uint64_t {
  kSampler = 1,  // the sampler's injected noise and momentum draws
  kBatches = 2,  // the minibatch order
  kInit = 3,     // the chain's starting point
  kGibbs = 4,    // Gibbs draws of prior precisions (a learned prior scale)
};

/// The one mixing function every per-chain stream of a run derives from:
/// mix_seed(mix_seed(seed, purpose), chain), two full splitmix64 rounds. Unlike
/// seed * k + chain, nearby seeds (s and s + 7919) give unrelated streams, and so do
/// the purposes of one chain.
std::uint64_t stream_seed(std::uint64_t seed, SeedPurpose purpose, std::uint64_t chain);

/// xoshiro256++ ("Scrambled linear pseudorandom number generators", ACM TOMS 2021)
/// in kLanes independent lanes for vectorised normals, plus one scalar lane for
/// uniforms and exponentials.
class Rng {
 public:
  static constexpr int kLanes = 8;
  /// Number of 64-bit words in state().
  static constexpr std::size_t kStateWords = 4 * (kLanes + 1);

  explicit Rng(std::uint64_t seed = 0) { reseed(seed); }

  /// Restarts every lane from `seed` (lanes seeded through splitmix64).
  void reseed(std::uint64_t seed);

  /// Next 64 random bits of the scalar lane.
  std::uint64_t next_u64();
  /// Uniform on [0, 1) with 53 random bits.
  double uniform();
  /// Exponential(1).
  double exponential();
  /// One standard normal in double (Box-Muller on the scalar lane).
  double normal();

  /// Fills `out` with independent N(0, 1) floats: Box-Muller on 24-bit uniforms
  /// with polynomial log/sin/cos (relative error below 1e-6), 16 draws per block;
  /// a partial last block discards its unused draws so the stream stays aligned.
  /// The largest possible |draw| is about 5.9 (tail beyond has probability 4e-9).
  void fill_normal(std::span<float> out);

  /// The full state as plain words, and back. set_state returns false (and leaves
  /// the engine unchanged) when `words` has the wrong length or an all-zero lane.
  std::vector<std::uint64_t> state() const;
  bool set_state(std::span<const std::uint64_t> words);

 private:
  void normal_block(float* out);  // writes 2 * kLanes draws

  // lanes_[w][l]: word w of lane l, laid out so one loop over l vectorises.
  alignas(64) std::array<std::array<std::uint64_t, kLanes>, 4> lanes_{};
  std::array<std::uint64_t, 4> scalar_{};
};

}  // namespace credence
