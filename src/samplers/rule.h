// The shared base of every update rule: settings, RNG, gradient and noise buffers,
// checked potential evaluation, and the factories of the individual rules.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <memory>

#include "credence/samplers.h"
#include "util/rng.h"

namespace credence::samplers {

/// Common state and helpers; each method file derives one class from it.
class Rule : public Sampler {
 public:
  Rule(const SamplerSettings& settings, std::int64_t parameters, std::int64_t rows,
       std::uint64_t seed);
  double base_step_size() const override { return base_step_; }

 protected:
  /// Minibatch U~ and gradient into grad_ at theta; fills report.potential and
  /// report.accuracy; kDiverged when U~ or any gradient entry is not finite.
  Status evaluate_minibatch(ConstThetaRef theta, PotentialFn& potential, StepReport& report);
  /// Full-data U and gradient into `grad`; kDiverged when either is not finite
  /// only if `check` (hmc inside a trajectory treats that as a rejection instead).
  Status evaluate_full(ConstThetaRef theta, PotentialFn& potential, Eigen::VectorXf& grad,
                       double& value);

  /// The gradient-noise correction (sghmc, rsghmc) needs Vhat from the potential: fills
  /// vhat, or refuses (kInvalidInput) a potential that does not estimate it, so the
  /// switch never silently does nothing.
  Status gradient_noise_variance(PotentialFn& potential, Eigen::VectorXf& vhat) const;

  /// T for this step: 0 for the optimizers and in exploration, else settings.
  double temperature(const StepContext& context) const;
  /// Fills noise_ with fresh N(0, 1) draws.
  void draw_noise() { rng_.fill_normal({noise_.data(), static_cast<std::size_t>(noise_.size())}); }

  /// Saves / restores the RNG words and the step counter; each rule adds its own.
  void save_common(SamplerState& state) const;
  Status restore_common(const SamplerState& state);
  static Status restore_vector(const SamplerState& state, const std::string& name,
                               Eigen::VectorXf& into);
  static Status restore_double(const SamplerState& state, const std::string& name, double& into);

  SamplerSettings settings_;
  std::int64_t parameters_;  // P
  std::int64_t rows_;        // N
  double base_step_;         // U units, before the schedule
  Rng rng_;
  std::uint64_t steps_taken_ = 0;  // completed step() calls
  Eigen::VectorXf grad_;           // (P) gradient of U~ at the current theta
  Eigen::VectorXf noise_;          // (P) N(0, 1) draws of this step
};

using RulePtr = std::unique_ptr<Sampler>;

// One factory per method file. REQUIRES: validate(settings) passed.
RulePtr make_sgld(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);
RulePtr make_psgld(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);
RulePtr make_sghmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);
RulePtr make_rsghmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);
RulePtr make_adam(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);
RulePtr make_hmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);
RulePtr make_santa(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);
RulePtr make_rhmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed);

}  // namespace credence::samplers

namespace credence::samplers {
/// A float vector as a state array.
inline std::vector<float> to_floats(const Eigen::VectorXf& v) {
  return std::vector<float>(v.data(), v.data() + v.size());
}
}  // namespace credence::samplers
