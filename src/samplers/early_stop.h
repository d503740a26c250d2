// Early stopping for optimizer chains: score theta on held-out rows every few steps,
// remember the best iterate, and say when the chain should end (samplers.h,
// EarlyStopSettings). Its state travels in the chain's checkpoint, so a resumed chain
// stops exactly where an uninterrupted one would.
#pragma once

#include <cstdint>
#include <limits>
#include <string>

#include "credence/samplers.h"

namespace credence::samplers {

class EarlyStopper {
 public:
  /// REQUIRES: settings.every > 0, scorer callable. Sizes the best iterate now, so
  /// after_step() allocates nothing beyond what the scorer does.
  EarlyStopper(const EarlyStopSettings& settings, std::int64_t parameters, HeldOutScore scorer);

  /// After step `step` (0-based) of a chain of `total` steps: scores theta when due and
  /// returns true when the chain should end now (patience used up past min_steps, or
  /// the last step). Fails when the scorer fails or returns a non-finite score.
  Result<bool> after_step(std::int64_t step, std::int64_t total, ConstThetaRef theta);

  const Eigen::VectorXf& best_theta() const { return best_theta_; }
  /// The step after which the best iterate was scored; -1 before the first score.
  std::int64_t best_step() const { return best_step_; }
  /// Why the chain ended, for its final checkpoint: early, or at the end of its budget.
  std::string reason() const;

  /// Adds the state under kEarlyStopStatePrefix; restore() reads it back (kCorrupt when
  /// an array is missing or the wrong size).
  void save(NamedArrays& into) const;
  Status restore(const NamedArrays& from);

 private:
  EarlyStopSettings settings_;
  HeldOutScore scorer_;
  Eigen::VectorXf best_theta_;  // (P)
  double best_score_ = std::numeric_limits<double>::infinity();
  std::int64_t best_step_ = -1;
  std::int64_t checks_without_gain_ = 0;
  std::int64_t ended_at_ = -1;  // the step after which after_step() said "end"; -1 while running
  bool ended_early_ = false;
};

/// Removes early stopping's arrays from `state` (they are not the sampler's) into `into`.
void take_early_stop_state(NamedArrays& state, NamedArrays& into);

}  // namespace credence::samplers
