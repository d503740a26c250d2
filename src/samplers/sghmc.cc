// SGHMC in its momentum parameterisation (and momentum, its T = 0 limit).
//
// "Stochastic gradient Hamiltonian Monte Carlo", ICML 2014; docs/methods.md section 4:
//   v_{t+1}     = (1 - alpha) v_t - eta g_t + sqrt(2 eta max(0, alpha T - beta_hat)) xi
//   theta_{t+1} = theta_t + v_{t+1},          beta_hat = eta Vhat / 2
// The minibatch already injects momentum noise of variance eta^2 Vhat = 2 eta beta_hat;
// the rule adds only the difference (docs/methods.md section 13, point 2). At T = 0 no noise
// is drawn: the heavy-ball update, bit for bit the same arithmetic as `momentum`.
#include <algorithm>
#include <cmath>

#include "samplers/rule.h"

namespace credence::samplers {
namespace {

class SghmcRule final : public Rule {
 public:
  SghmcRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed)
      : Rule(s, p, n, seed),
        v_(Eigen::VectorXf::Zero(p)),
        vhat_(Eigen::VectorXf::Zero(s.sghmc.correct_gradient_noise ? p : 0)) {}

  Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
              StepReport& report) override {
    CREDENCE_RETURN_IF_ERROR(evaluate_minibatch(theta, potential, report));
    const SghmcSettings& ss = settings_.sghmc;
    const double eta = context.step_size;
    const double temperature = this->temperature(context);
    if (ss.resample_every > 0 && temperature > 0 &&
        steps_taken_ % static_cast<std::uint64_t>(ss.resample_every) == 0) {
      draw_noise();
      v_ = static_cast<float>(std::sqrt(eta * temperature)) * noise_;
    }
    // One fused pass: v = (1 - alpha) v - eta g (+ sd xi), theta += v.
    const auto decay = static_cast<float>(1.0 - ss.alpha);
    const auto eta_f = static_cast<float>(eta);
    float* __restrict th = theta.data();
    float* __restrict v = v_.data();
    const float* __restrict g = grad_.data();
    const std::int64_t n = parameters_;
    report.clipped = 0;
    if (temperature > 0) {
      draw_noise();
      const float* __restrict xi = noise_.data();
      const double target = ss.alpha * temperature;  // alpha T
      if (ss.correct_gradient_noise) {
        CREDENCE_RETURN_IF_ERROR(gradient_noise_variance(potential, vhat_));
        // beta_hat_i = eta Vhat_i / 2, clipped to [0, alpha T (1 - 1e-3)].
        const float* __restrict vh = vhat_.data();
        const auto cap = static_cast<float>(target * (1.0 - 1e-3));
        const auto target_f = static_cast<float>(target);
        std::int64_t clipped = 0;
        for (std::int64_t i = 0; i < n; ++i) {
          const float beta_hat = 0.5f * eta_f * vh[i];
          clipped += static_cast<std::int64_t>((beta_hat > cap) | (beta_hat < 0));
          const float sd =
              std::sqrt(2.0f * eta_f * (target_f - std::clamp(beta_hat, 0.0f, cap)));
          const float vi = (decay * v[i] - eta_f * g[i]) + sd * xi[i];
          v[i] = vi;
          th[i] += vi;
        }
        report.clipped = clipped;
        clipped_total_ += static_cast<std::uint64_t>(clipped);
      } else {
        const auto sd = static_cast<float>(std::sqrt(2 * eta * target));
        for (std::int64_t i = 0; i < n; ++i) {
          const float vi = (decay * v[i] - eta_f * g[i]) + sd * xi[i];
          v[i] = vi;
          th[i] += vi;
        }
      }
    } else {
      for (std::int64_t i = 0; i < n; ++i) {
        const float vi = decay * v[i] - eta_f * g[i];
        v[i] = vi;
        th[i] += vi;
      }
    }
    report.step_size = eta;
    ++steps_taken_;
    return Status::ok_status();
  }

  SamplerState save_state() const override {
    SamplerState state;
    save_common(state);
    state.floats["v"] = to_floats(v_);
    state.words["clipped_total"] = {clipped_total_};
    return state;
  }

  Status restore_state(const SamplerState& state) override {
    CREDENCE_RETURN_IF_ERROR(restore_common(state));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "v", v_));
    auto it = state.words.find("clipped_total");
    if (it == state.words.end() || it->second.size() != 1) {
      return Status::corrupt("sampler state lacks 'clipped_total'");
    }
    clipped_total_ = it->second[0];
    return Status::ok_status();
  }

 private:
  Eigen::VectorXf v_;                // (P) momentum in theta units (v = eps M^-1 r)
  Eigen::VectorXf vhat_;             // (P) gradient-noise variance, when corrected
  std::uint64_t clipped_total_ = 0;  // beta_hat clips over the whole chain
};

}  // namespace

RulePtr make_sghmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<SghmcRule>(s, p, n, seed);
}

}  // namespace credence::samplers
