// Evidence updates of the block precisions for optimizers (docs/methods.md section 15).
//
// An optimizer cannot use the Gibbs draw's T -> 0 limit (coordinate ascent on the joint
// mode of theta and lambda drives lambda to infinity and theta to zero). Instead, between
// steps, each block's precision moves towards the evidence maximum of "A Practical
// Bayesian Framework for Backpropagation Networks" (Neural Computation, 1992):
//   gamma_b  = sum_{i in b} h_i / (h_i + lambda_b)   (effective number of parameters)
//   lambda_b <- gamma_b / ||theta_b||^2, clipped to [kMinPrecision, kMaxPrecision],
// taken as a damped step in log space (kLogStep of the way) so that an iterate that has
// not settled at the MAP does not make lambda oscillate.
// The CLI's optimizers start loose (kStartScale) and cap lambda_b at the block's fixed-prior
// precision (scale 1): the update may loosen the prior, never tighten it beyond the fixed one. Without
// the cap a block pinned near zero (typically biases) feeds the collapse of docs/methods.md
// section 15 (lambda grows, theta shrinks, lambda grows), and sgd at its default step
// diverged once lr x lambda passed its stability limit (measured on a 100-row table).
// h_i is the Gauss-Newton diagonal of the data term on the U scale (a sum over all N rows).
// Estimator (docs/methods.md section 15): on a fixed seeded subset of m = min(N, kSubsetRows)
// training rows, the squared single-row gradient of -log p(y~ | x_n, theta), with the
// label y~ drawn from the model's own softmax at x_n, summed and scaled by N/m. Its
// expectation over y~ is exactly the GGN diagonal of those rows (for softmax outputs the
// Fisher and the Gauss-Newton matrix agree); it is NOT the empirical Fisher (true labels).
// The diagonal approximation over-counts gamma ((A^-1)_ii >= 1/A_ii), so lambda comes out
// somewhat too large.
// Schedule: the first update before step max(kWarmupFloor, kWarmupPasses passes), then
// every max(kEveryFloor, kEveryPasses passes) steps. The label draws of an update come
// from a stream derived from the chain's seed and the step, so the only state is lambda
// itself (saved as "prior_precision"): a resumed chain continues bit for bit.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <span>
#include <vector>

#include "credence/named_arrays.h"
#include "credence/posterior.h"

namespace credence {

/// One block's evidence target gamma_b / ||theta_b||^2 (unclipped; +infinity when the
/// block is zero). `h` is the block's Gauss-Newton diagonal. REQUIRES: lambda > 0, h >= 0.
double evidence_precision_target(std::span<const double> h, double lambda, double norm2);

/// The damped move from `lambda` towards `target`, clipped to [kMinPrecision,
/// min(kMaxPrecision, upper)] (see the file comment).
double evidence_precision_step(double lambda, double target, double upper = 1e300);

/// Per-chain evidence state of an optimizer's prior: the row subset and scratch buffers.
class PrecisionEvidence {
 public:
  static constexpr std::int64_t kSubsetRows = 256;
  static constexpr std::int64_t kWarmupFloor = 500;
  static constexpr double kWarmupPasses = 1;
  static constexpr std::int64_t kEveryFloor = 200;
  static constexpr double kEveryPasses = 1;
  static constexpr double kLogStep = 0.5;
  // The CLI's optimizers start at the fixed prior's standard deviations times this
  // (precisions / 9). Measured with adam on 4 tables (docs/prior.md): 10 gave 0.236 and
  // 0.003 on the 100-row subsamples but 0.188 on the 569-row table (fixed scale 1: 0.089);
  // 3 keeps the large table at 0.092 and still lifts the small ones.
  static constexpr double kStartScale = 3;
  static constexpr double kMinPrecision = 1e-6;
  static constexpr double kMaxPrecision = 1e6;

  /// `rows_n` training rows, `steps_per_pass` steps in one pass, `seed` the chain's
  /// stream (the subset and the label draws derive from it); `upper` (one per block) caps
  /// each precision (the fixed prior's; empty: no cap but kMaxPrecision).
  PrecisionEvidence(const ParamLayout& layout, std::span<const double> upper, std::int64_t rows_n,
                    std::int64_t steps_per_pass, std::uint64_t seed);

  /// True before step `step` when an update is due.
  bool due(std::int64_t step) const {
    return step >= warmup_ && (step - warmup_) % every_ == 0;
  }

  /// Estimates h at theta on the subset of x's columns (D, N) and moves every block's
  /// precision in `potential`. Allocates nothing.
  Status update(ConstVecRef<float> theta, const Eigen::MatrixXf& x, std::int64_t step,
                Potential<float>& potential);

  /// The Gauss-Newton diagonal estimate of the last update (P).
  std::span<const double> last_diagonal() const { return h_; }

  /// doubles["prior_precision"] (the potential's current lambda).
  static void save_state(const GaussianPrior& prior, NamedArrays& out);
  /// Restores the precisions; kCorrupt when missing or malformed (nothing changes then).
  static Status restore_state(const NamedArrays& in, Potential<float>& potential);

 private:
  std::uint64_t seed_;
  std::vector<double> upper_;  // (blocks) or empty
  std::int64_t warmup_;
  std::int64_t every_;
  double n_over_m_;
  std::vector<std::int64_t> subset_;  // (m) columns of x
  Network<float> network_;
  Workspace<float> workspace_;        // one row
  VecX<float> log_lik_;               // (1)
  VecX<float> grad_;                  // (P) one row's gradient
  std::vector<double> h_;             // (P)
  std::vector<double> next_;          // (blocks) scratch
};

}  // namespace credence
