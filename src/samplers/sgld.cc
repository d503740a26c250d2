// SGLD (and sgd, its T = 0 limit): the simplest rule, written to be copied.
//
// SGLD, "Bayesian learning via stochastic gradient Langevin dynamics", ICML 2011;
// docs/methods.md section 2:
//   theta_{t+1} = theta_t - (eps_t / 2) g_t + sqrt(eps_t T) xi_t
// At T = 0 (sgd, or a cyclical schedule's exploration stage) no noise is drawn and
// the update is plain gradient descent with step eps/2 from the same arithmetic, so
// sgld at T = 0 and sgd give the same iterates bit for bit.
#include <cmath>

#include "samplers/rule.h"

namespace credence::samplers {
namespace {

class SgldRule final : public Rule {
 public:
  using Rule::Rule;

  Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
              StepReport& report) override {
    CREDENCE_RETURN_IF_ERROR(evaluate_minibatch(theta, potential, report));
    const double eps = context.step_size;
    const double temperature = this->temperature(context);
    // One fused pass: theta - (eps/2) g, then + sd xi, in that order at every T.
    float* __restrict th = theta.data();
    const float* __restrict g = grad_.data();
    const auto half = static_cast<float>(eps / 2);
    const std::int64_t n = parameters_;
    if (temperature > 0) {
      draw_noise();
      const float* __restrict xi = noise_.data();
      const auto sd = static_cast<float>(std::sqrt(eps * temperature));
      for (std::int64_t i = 0; i < n; ++i) th[i] = (th[i] - half * g[i]) + sd * xi[i];
    } else {
      for (std::int64_t i = 0; i < n; ++i) th[i] -= half * g[i];
    }
    report.step_size = eps;
    ++steps_taken_;
    return Status::ok_status();
  }

  SamplerState save_state() const override {
    SamplerState state;
    save_common(state);
    return state;
  }

  Status restore_state(const SamplerState& state) override { return restore_common(state); }
};

}  // namespace

RulePtr make_sgld(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<SgldRule>(s, p, n, seed);
}

}  // namespace credence::samplers
