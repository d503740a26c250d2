// Adam, the baseline optimizer (no temperature, no noise).
//
// "Adam: a method for stochastic optimization", ICLR 2015; docs/methods.md section 7,
// on the mean loss (gradient g / N, so the step a is in the usual units):
//   m_t = beta1 m + (1 - beta1) g,   v_t = beta2 v + (1 - beta2) g^2
//   theta_t = theta_{t-1} - a (m_t / (1 - beta1^t)) / (sqrt(v_t / (1 - beta2^t)) + epsilon)
#include <cmath>

#include "samplers/rule.h"

namespace credence::samplers {
namespace {

class AdamRule final : public Rule {
 public:
  AdamRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed)
      : Rule(s, p, n, seed), m_(Eigen::VectorXf::Zero(p)), v_(Eigen::VectorXf::Zero(p)) {}

  Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
              StepReport& report) override {
    CREDENCE_RETURN_IF_ERROR(evaluate_minibatch(theta, potential, report));
    const AdamSettings& as = settings_.adam;
    ++steps_taken_;
    const double t = static_cast<double>(steps_taken_);
    const auto beta1 = static_cast<float>(as.beta1);
    const auto beta2 = static_cast<float>(as.beta2);
    const auto inv_n = static_cast<float>(1.0 / static_cast<double>(rows_));
    const auto m_scale = static_cast<float>(1.0 / (1.0 - std::pow(as.beta1, t)));
    const auto v_scale = static_cast<float>(1.0 / (1.0 - std::pow(as.beta2, t)));
    const auto a = static_cast<float>(context.step_size);
    const auto epsilon = static_cast<float>(as.epsilon);
    const float m_gain = (1.0f - beta1) * inv_n;
    const float v_gain = (1.0f - beta2) * inv_n * inv_n;
    // One fused pass over the moments and theta. A plain loop: Eigen's AVX-512 packet
    // sqrt trips gcc 12's maybe-uninitialized check.
    float* __restrict th = theta.data();
    float* __restrict m = m_.data();
    float* __restrict v = v_.data();
    const float* __restrict g = grad_.data();
    for (std::int64_t i = 0; i < parameters_; ++i) {
      const float mi = beta1 * m[i] + m_gain * g[i];
      const float vi = beta2 * v[i] + v_gain * (g[i] * g[i]);
      m[i] = mi;
      v[i] = vi;
      th[i] -= a * (m_scale * mi) / (std::sqrt(v_scale * vi) + epsilon);
    }
    report.step_size = context.step_size;
    return Status::ok_status();
  }

  SamplerState save_state() const override {
    SamplerState state;
    save_common(state);
    state.floats["m"] = to_floats(m_);
    state.floats["v"] = to_floats(v_);
    return state;
  }

  Status restore_state(const SamplerState& state) override {
    CREDENCE_RETURN_IF_ERROR(restore_common(state));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "m", m_));
    return restore_vector(state, "v", v_);
  }

 private:
  Eigen::VectorXf m_;  // (P) first moment of g / N
  Eigen::VectorXf v_;  // (P) second moment of g / N
};

}  // namespace

RulePtr make_adam(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<AdamRule>(s, p, n, seed);
}

}  // namespace credence::samplers
