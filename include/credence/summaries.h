// summaries: the tracked per-sample summaries of docs/methods.md 10.3, computed once per kept sample.
//
// Raw weights are not identifiable (hidden units permute and flip), so convergence is
// judged on summaries that are: the probe set's log-likelihood, each probe row's
// predictive probability of its own label, and each layer's squared norm; plus a few
// fixed random projections u_j^T theta, meaningful within a chain only (for ESS).
// A SampleSummarizer owns a copy of the probe rows, the projection vectors and a
// forward workspace: build one per thread (per chain, or the writer's), then call
// summarize() for every kept sample; it allocates nothing after the first call.
//
//   ProbeSet probe{x_probe, y_probe};                      // (D, R) and (R)
//   Result<SampleSummarizer> s = SampleSummarizer::create(layout, probe, 4, seed);
//   SampleSummary out = s->make_summary();
//   Status ok = s->summarize(theta, out);                  // per kept sample
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <vector>

#include "credence/net.h"
#include "credence/status.h"

namespace credence {

/// Default number of random projections (docs/methods.md 10.3 suggests 4 to 8).
inline constexpr int kDefaultProjections = 4;

/// Fixed held-out rows whose predictions are tracked.
struct ProbeSet {
  Eigen::MatrixXf x;                 // (D, R), preprocessed like the training rows
  std::vector<std::int32_t> labels;  // (R), class indices 0..K-1
};

/// The summaries of one parameter vector.
struct SampleSummary {
  double probe_log_lik = 0;        // sum over probe rows r of log p(y_r | x_r, theta)
  Eigen::VectorXf probe_prob;      // (R) p(y_r | x_r, theta), each row's own label
  Eigen::VectorXf projections;     // (J) u_j^T theta
  Eigen::VectorXf layer_sq_norms;  // (L) ||W_l||^2 + ||b_l||^2 per layer, output last
};

/// Computes SampleSummary for a fixed network layout, probe set and projections.
///
/// The projection vectors u_j ~ N(0, I/P), j = 0..J-1, come from the seed alone, so a
/// reader with the seed can rebuild them (numpy: tests/tools/numpy_summaries.py):
///   state = seed                                   # uint64, wrapping arithmetic
///   for j in 0..J-1, for i in 0..P-1:
///     a = splitmix64(state); b = splitmix64(state)  # two steps of SplitMix64
///     u1 = ((a >> 11) + 1) * 2^-53                  # (0, 1]
///     u2 = (b >> 11) * 2^-53                        # [0, 1)
///     u_j[i] = float32(sqrt(-2 ln u1) * cos(2 pi u2) / sqrt(P))   # in double, then rounded
/// where splitmix64(s): s += 0x9E3779B97F4A7C15; z = s; z = (z ^ (z >> 30)) *
/// 0xBF58476D1CE4E5B9; z = (z ^ (z >> 27)) * 0x94D049BB133111EB; return z ^ (z >> 31)
/// ("Fast splittable pseudorandom number generators", OOPSLA 2014), and the cosine
/// branch of Box-Muller ("A note on the generation of random normal deviates", Annals
/// of Mathematical Statistics, 1958). u_j^T theta is accumulated in double.
class SampleSummarizer {
 public:
  /// Copies `probe` and draws the projections. Fails with kInvalidInput when probe.x
  /// is not (D, R) with R == probe.labels.size(), a label is outside [0, K), or
  /// projections is outside [0, 1024].
  static Result<SampleSummarizer> create(const ParamLayout& layout, ProbeSet probe,
                                         int projections = kDefaultProjections,
                                         std::uint64_t seed = 0);

  /// A summary sized for this summarizer (allocates; reuse it for every sample).
  SampleSummary make_summary() const;

  /// Fills `out` for theta (P). Allocates nothing when `out` came from make_summary()
  /// or a previous call. Fails with kInvalidInput when theta is not of length P.
  /// Non-finite theta gives non-finite summaries, not an error.
  Status summarize(ConstVecRef<float> theta, SampleSummary& out);

  Index probe_rows() const { return static_cast<Index>(probe_.labels.size()); }  // R
  int projection_count() const { return static_cast<int>(directions_.cols()); }  // J
  Index layer_count() const { return static_cast<Index>(network_.layout().layers.size()); }
  /// The projection vectors as columns, (P, J).
  const Eigen::MatrixXf& directions() const { return directions_; }

 private:
  SampleSummarizer(const ParamLayout& layout, ProbeSet probe, Eigen::MatrixXf directions);

  Network<float> network_;
  ProbeSet probe_;
  Workspace<float> workspace_;  // sized for all R probe rows at once
  Eigen::MatrixXf directions_;  // (P, J)
};

}  // namespace credence
