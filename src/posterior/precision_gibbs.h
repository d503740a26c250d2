// Gibbs updates of the block precisions of a prior that learns its scale.
//
// docs/methods.md section 15: block b (a layer's weights, or its biases) has d_b parameters and
// precision lambda_b ~ Gamma(shape a, rate r). Every K steps each lambda_b is redrawn from
//   lambda_b | theta ~ Gamma(a + d_b/2, r + ||theta_b||^2/2)                       (T = 1)
// or, tempering the whole posterior at T (the jointly tempered (theta, lambda)),
//   Gamma((a - 1 + d_b/2)/T + 1, (r + ||theta_b||^2/2)/T).
// Likelihood-only tempering keeps the T = 1 form: the potential divides the likelihood by
// T and leaves the prior, whose gradient stays lambda_b theta (Form B of docs/methods.md
// section 1). The draws use their own Rng stream, saved with the chain state.
#pragma once

#include <cstdint>
#include <vector>

#include "credence/named_arrays.h"
#include "credence/posterior.h"
#include "util/rng.h"

namespace credence {

/// Gamma(shape, rate) parameters.
struct GammaShapeRate {
  double shape = 1;
  double rate = 1;
};

/// The conditional of one block's precision (see the file comment).
/// REQUIRES: a, r, T > 0, d >= 0, norm2 >= 0.
GammaShapeRate precision_conditional(double a, double r, double d, double norm2,
                                     double temperature, Tempering tempering);

/// Per-chain Gibbs state: hyperprior constants per block, the update period and the Rng.
class PrecisionGibbs {
 public:
  /// Rates per block from `spec` (a fixed r, or r_b = a x the block's fixed precision),
  /// a period of `every_steps` >= 1 steps, and the Rng stream `seed`.
  PrecisionGibbs(const PriorSpec& spec, const GaussianPrior& prior, std::int64_t every_steps,
                 double temperature, Tempering tempering, std::uint64_t seed);

  /// True before step `step` when an update is due (every K steps, never before step 0).
  bool due(std::int64_t step) const { return step > 0 && step % every_ == 0; }
  std::int64_t every() const { return every_; }

  /// Draws every block's precision given theta and installs them in `potential`.
  /// Allocates nothing.
  template <typename S>
  void draw(ConstVecRef<S> theta, Potential<S>& potential);

  /// words["prior_rng"] and doubles["prior_precision"] (the potential's current lambda).
  void save_state(const GaussianPrior& prior, NamedArrays& out) const;
  /// Restores the Rng and the precisions into `potential`; kCorrupt when either is
  /// missing or malformed (nothing is changed then).
  template <typename S>
  Status restore_state(const NamedArrays& in, Potential<S>& potential);

 private:
  double shape_;
  std::vector<double> rates_;  // (blocks)
  std::int64_t every_;
  double temperature_;
  Tempering tempering_;
  Rng rng_;
  std::vector<double> drawn_;  // (blocks) scratch
};

}  // namespace credence
