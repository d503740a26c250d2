// Full-batch relativistic HMC (per-coordinate kinetic energy).
//
// "Relativistic Monte Carlo", AISTATS 2017; docs/methods.md 5.3:
//   K(p) = sum_i m_i c_i^2 sqrt(p_i^2 / (m_i c_i)^2 + 1),  v_i = c_i p_i / hypot(p_i, m_i c_i)
// Momentum refresh: closed-form slice sampling per coordinate (docs/methods.md 5.2), a few
// sweeps from the current p (30 at the first iteration, which starts from p = 0).
//
// c and m are derived once, from the starting step eps_0 (c = max_move / eps_0,
// m = u* T / c^2), and are deliberately not re-derived when dual averaging changes eps.
// Writing p = eps k, a leapfrog step is k -= grad U / 2, theta += S k / sqrt(k^2 + a^2),
// and K / T = S sqrt(k^2 + a^2) / T, with S = eps c and a = m c / eps: the dynamics
// depend on eps only through the per-step bound S = eps c (at fixed c and m, dual
// averaging keeps u = m c^2 / T, the target speed ratio, and scales S by eps / eps_0).
// Re-deriving c and m from each adapted eps would make S = max_move and a fixed, so
// every eps would give the same trajectory and the same acceptance: dual averaging would
// drift without bound and tune nothing. Re-deriving them once at the freeze would undo
// the adaptation (or, keeping m, change the speed ratio it was tuned at). So for rhmc,
// max_move is the bound at eps_0, and the adapted bound is eps c (times the jitter,
// up to 1 + HmcSettings::jitter). The Metropolis test keeps the target exact for any c.
// Tests: tests/samplers/adapted_constants_test.cc.
//
// Each trajectory records its mean |v|/c (over the coordinates and the L drifts, accepted
// or not; docs/methods.md 5.3) in the trace row's speed_ratio, as rsghmc records its steps',
// so diagnose and the tuning map read rhmc's speed the same way.
#include <cmath>

#include "samplers/hamiltonian.h"
#include "samplers/relativistic.h"

namespace credence::samplers {
namespace {

class RhmcRule final : public HamiltonianRule {
 public:
  RhmcRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed)
      : HamiltonianRule(s, p, n, seed),
        layout_(build_relativistic_layout(s.relativistic, p, base_step_, s.temperature)) {}

 private:
  void refresh_momentum(double temperature) override {
    if (temperature <= 0) {
      p_.setZero();
      return;
    }
    const int sweeps = steps_taken_ == 0 ? 30 : settings_.relativistic.refresh_sweeps;
    for (int s = 0; s < sweeps; ++s) {
      refresh_relativistic_momentum(p_, layout_.mass, layout_.speed, temperature, rng_);
    }
  }
  double kinetic_energy() const override {
    double k = 0;
    for (Eigen::Index i = 0; i < p_.size(); ++i) {
      k += relativistic_kinetic_excess(p_[i], layout_.mass[i], layout_.speed[i]);
    }
    return k;
  }
  void drift(ThetaRef theta, float eps) override {
    double ratio_sum = 0;
    for (Eigen::Index i = 0; i < p_.size(); ++i) {
      const float v = relativistic_velocity(p_[i], layout_.mass[i], layout_.speed[i]);
      theta[i] += eps * v;
      ratio_sum += std::abs(v) / layout_.speed[i];
    }
    speed_sum_ += ratio_sum / static_cast<double>(p_.size());
    ++drifts_;
  }
  void begin_trajectory() override {
    speed_sum_ = 0;
    drifts_ = 0;
  }
  std::optional<double> trajectory_speed_ratio() const override {
    if (drifts_ == 0) return std::nullopt;
    return speed_sum_ / static_cast<double>(drifts_);
  }

  RelativisticLayout layout_;
  double speed_sum_ = 0;  // sum over this trajectory's drifts of mean_i |v_i| / c_i
  int drifts_ = 0;
};

}  // namespace

RulePtr make_rhmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<RhmcRule>(s, p, n, seed);
}

}  // namespace credence::samplers
