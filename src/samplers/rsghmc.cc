// Relativistic SGHMC (and rsgd, its T = 0 limit).
//
// "Relativistic Monte Carlo", AISTATS 2017; METHODS.md 5.4-5.6:
//   p_{t+1}     = p_t - eps g_t - eps D v(p_t) + N(0, eps (2 D T - eps Bhat))
//   theta_{t+1} = theta_t + eps v(p_{t+1}),     v_i = c_i p_i / hypot(p_i, m_i c_i)
// (joint form: v = c p / sqrt(|p|^2 + m^2 c^2)). |v_i| <= c_i, so no coordinate moves
// more than eps c_i per step whatever the gradient. At T = 0 no noise is drawn: rsgd
// with the same arithmetic. During burn-in each slice's mass may adapt towards a
// target mean speed ratio E|v|/c (METHODS.md 5.6), then it is frozen.
#include <algorithm>
#include <cmath>

#include "samplers/relativistic.h"
#include "samplers/rule.h"

namespace credence::samplers {
namespace {

class RsghmcRule final : public Rule {
 public:
  RsghmcRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed)
      : Rule(s, p, n, seed),
        layout_(build_relativistic_layout(s.relativistic, p, base_step_, temperature_setting())),
        p_(Eigen::VectorXf::Zero(p)),
        friction_(p),
        vhat_(Eigen::VectorXf::Zero(s.relativistic.correct_gradient_noise ? p : 0)),
        window_sum_(static_cast<std::size_t>(layout_.groups), 0.0),
        window_count_(static_cast<std::size_t>(layout_.groups), 0.0) {
    const RelativisticSettings& rs = s.relativistic;
    if (rs.friction > 0) {
      friction_.setConstant(static_cast<float>(rs.friction));
    } else {
      friction_ = layout_.mass * static_cast<float>(rs.alpha / base_step_);
    }
  }

  Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
              StepReport& report) override {
    CREDENCE_RETURN_IF_ERROR(evaluate_minibatch(theta, potential, report));
    const RelativisticSettings& rs = settings_.relativistic;
    const double eps = context.step_size;
    const double temperature = this->temperature(context);
    const auto eps_f = static_cast<float>(eps);
    const bool noisy = temperature > 0;
    if (noisy) draw_noise();
    const bool correct =
        noisy && rs.correct_gradient_noise && potential.gradient_noise_variance(vhat_);
    std::int64_t clipped = 0;
    double speed_sum = 0;

    // Noise standard deviation of coordinate i: sqrt(eps (2 D_i T - eps Bhat_i)),
    // Bhat clipped so the bracket stays >= 2 D_i T 1e-3.
    auto noise_sd = [&](Eigen::Index i) {
      const double full = 2.0 * friction_[i] * temperature;
      double bracket = full;
      if (correct) {
        bracket = full - eps * static_cast<double>(vhat_[i]);
        if (bracket < full * 1e-3) {
          bracket = full * 1e-3;
          ++clipped;
        }
      }
      return static_cast<float>(std::sqrt(eps * bracket));
    };

    if (rs.joint) {
      const float m = layout_.mass[0], c = layout_.speed[0];
      const double mc2 = static_cast<double>(m) * c * static_cast<double>(m) * c;
      const double scale_old = c / std::sqrt(squared_norm(p_) + mc2);  // v = scale p
      for (Eigen::Index i = 0; i < p_.size(); ++i) {
        const auto v_old = static_cast<float>(scale_old * p_[i]);
        p_[i] += -eps_f * grad_[i] - eps_f * friction_[i] * v_old;
        if (noisy) p_[i] += noise_sd(i) * noise_[i];
      }
      const double scale_new = c / std::sqrt(squared_norm(p_) + mc2);
      for (Eigen::Index i = 0; i < p_.size(); ++i) {
        const auto v = static_cast<float>(scale_new * p_[i]);
        theta[i] += eps_f * v;
        speed_sum += std::abs(v) / c;
      }
      window_sum_[0] += speed_sum / static_cast<double>(p_.size());
      window_count_[0] += 1;
    } else {
      for (const CoordinateRange& range : layout_.ranges) {
        double range_sum = 0;
        for (Eigen::Index i = range.offset; i < range.offset + range.length; ++i) {
          const float m = layout_.mass[i], c = layout_.speed[i];
          const float v_old = relativistic_velocity(p_[i], m, c);
          p_[i] += -eps_f * grad_[i] - eps_f * friction_[i] * v_old;
          if (noisy) p_[i] += noise_sd(i) * noise_[i];
          const float v = relativistic_velocity(p_[i], m, c);
          theta[i] += eps_f * v;
          range_sum += std::abs(v) / c;
        }
        speed_sum += range_sum;
        window_sum_[static_cast<std::size_t>(range.group)] += range_sum;
        window_count_[static_cast<std::size_t>(range.group)] += static_cast<double>(range.length);
      }
    }
    ++steps_taken_;
    if (rs.adapt_mass && context.burn_in && noisy &&
        steps_taken_ % static_cast<std::uint64_t>(rs.adapt_window) == 0) {
      adapt_masses();
    } else if (!context.burn_in || !rs.adapt_mass) {
      std::fill(window_sum_.begin(), window_sum_.end(), 0.0);
      std::fill(window_count_.begin(), window_count_.end(), 0.0);
    }
    report.step_size = eps;
    report.speed_ratio = speed_sum / static_cast<double>(p_.size());
    report.clipped = clipped;
    clipped_total_ += static_cast<std::uint64_t>(clipped);
    return Status::ok_status();
  }

  SamplerState save_state() const override {
    SamplerState state;
    save_common(state);
    state.floats["p"] = to_floats(p_);
    state.floats["mass"] = to_floats(layout_.mass);
    state.floats["speed"] = to_floats(layout_.speed);
    state.floats["friction"] = to_floats(friction_);
    state.doubles["window_sum"] = window_sum_;
    state.doubles["window_count"] = window_count_;
    state.words["clipped_total"] = {clipped_total_};
    return state;
  }

  Status restore_state(const SamplerState& state) override {
    CREDENCE_RETURN_IF_ERROR(restore_common(state));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "p", p_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "mass", layout_.mass));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "speed", layout_.speed));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "friction", friction_));
    auto sum = state.doubles.find("window_sum");
    auto count = state.doubles.find("window_count");
    auto clips = state.words.find("clipped_total");
    if (sum == state.doubles.end() || count == state.doubles.end() || clips == state.words.end() ||
        sum->second.size() != window_sum_.size() || count->second.size() != window_count_.size() ||
        clips->second.size() != 1) {
      return Status::corrupt("sampler state lacks the mass-adaptation windows");
    }
    window_sum_ = sum->second;
    window_count_ = count->second;
    clipped_total_ = clips->second[0];
    return Status::ok_status();
  }

 private:
  double temperature_setting() const {
    return is_sampler(settings_.method) ? settings_.temperature : 0.0;
  }

  static double squared_norm(const Eigen::VectorXf& x) { return x.cast<double>().squaredNorm(); }

  // METHODS.md 5.6: E|v|/c falls as m grows, so a fast slice gets heavier.
  void adapt_masses() {
    const RelativisticSettings& rs = settings_.relativistic;
    for (const CoordinateRange& range : layout_.ranges) {
      const auto g = static_cast<std::size_t>(range.group);
      if (window_count_[g] <= 0) continue;
      const double ratio = window_sum_[g] / window_count_[g];
      float factor = 1.0f;
      if (ratio > rs.target_speed_ratio + 0.1) factor = 1.1f;
      if (ratio < rs.target_speed_ratio - 0.1) factor = 1.0f / 1.1f;
      layout_.mass.segment(range.offset, range.length) *= factor;
    }
    std::fill(window_sum_.begin(), window_sum_.end(), 0.0);
    std::fill(window_count_.begin(), window_count_.end(), 0.0);
  }

  RelativisticLayout layout_;         // m, c per coordinate; m adapts during burn-in
  Eigen::VectorXf p_;                 // (P) momentum
  Eigen::VectorXf friction_;          // (P) D
  Eigen::VectorXf vhat_;              // (P) gradient-noise variance, when corrected
  std::vector<double> window_sum_;    // (groups) sum of |v|/c in this adaptation window
  std::vector<double> window_count_;  // (groups)
  std::uint64_t clipped_total_ = 0;
};

}  // namespace

RulePtr make_rsghmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<RsghmcRule>(s, p, n, seed);
}

}  // namespace credence::samplers
