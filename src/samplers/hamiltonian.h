// The Metropolis-corrected leapfrog shared by hmc (Gaussian kinetic energy) and
// rhmc (relativistic kinetic energy); each supplies its momentum refresh and K.
#pragma once

#include <Eigen/Core>
#include <optional>

#include "samplers/rule.h"

namespace credence::samplers {

/// One iteration (docs/methods.md sections 5.3 and 6): refresh p, L leapfrog steps with
/// a jittered eps, accept with min(1, exp(-(H1 - H0)/T)) (0 for a non-finite H1),
/// dual averaging of eps during burn-in, eps frozen at its average afterwards.
class HamiltonianRule : public Rule {
 public:
  HamiltonianRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);

  Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
              StepReport& report) final;
  SamplerState save_state() const final;
  Status restore_state(const SamplerState& state) final;
  void target_changed() final { cached_ = false; }

  /// L leapfrog steps of size eps from (theta, current p), with full-data
  /// gradients; H1 - H0 in `energy_change` (+inf when a value turned non-finite,
  /// which also ends the trajectory). Used by step(); public for tests.
  Status leapfrog(ThetaRef theta, PotentialFn& potential, float eps, int steps,
                  double& energy_change);
  /// The momentum, to set a trajectory's start in tests. p: (P).
  Eigen::VectorXf& momentum() { return p_; }

 protected:
  /// Draws p from exp(-K/T) (or moves it by an update leaving that law invariant).
  virtual void refresh_momentum(double temperature) = 0;
  /// K(p) without the constant rest energy.
  virtual double kinetic_energy() const = 0;
  /// theta += eps v(p).
  virtual void drift(ThetaRef theta, float eps) = 0;
  /// Called before each trajectory's leapfrog steps, and read after them: what the rule
  /// records of the trajectory in its trace row (rhmc: mean |v|/c over its drifts).
  virtual void begin_trajectory() {}
  virtual std::optional<double> trajectory_speed_ratio() const { return std::nullopt; }
  /// Called after accept (p negated) or reject (p restored) so a rule that keeps p
  /// between iterations can store it.
  virtual void save_extra(SamplerState&) const {}
  virtual Status restore_extra(const SamplerState&) { return Status::ok_status(); }

  Eigen::VectorXf p_;        // (P) momentum
  Eigen::VectorXf p_start_;  // (P) momentum at the start of the trajectory

 private:
  void adapt_step(double acceptance);

  Eigen::VectorXf theta_start_;  // (P)
  Eigen::VectorXf grad_start_;   // (P)
  double potential_ = 0.0;       // U at the current theta, valid when cached_
  bool cached_ = false;          // potential_ and grad_ belong to the current theta
  double eps_;                   // current leapfrog step
  // Dual averaging (the No-U-Turn sampler paper, JMLR 2014).
  double mu_;
  double h_bar_ = 0.0;
  double log_eps_bar_ = 0.0;
  std::uint64_t adapt_count_ = 0;
  bool adaptation_frozen_ = false;
  std::uint64_t divergent_ = 0;  // trajectories with H1 - H0 > 1000 T or non-finite
};

}  // namespace credence::samplers
