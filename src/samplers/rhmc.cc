// Full-batch relativistic HMC (per-coordinate kinetic energy).
//
// "Relativistic Monte Carlo", AISTATS 2017; METHODS.md 5.3:
//   K(p) = sum_i m_i c_i^2 sqrt(p_i^2 / (m_i c_i)^2 + 1),  v_i = c_i p_i / hypot(p_i, m_i c_i)
// Momentum refresh: closed-form slice sampling per coordinate (METHODS.md 5.2), a few
// sweeps from the current p (30 at the first iteration, which starts from p = 0).
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
    for (Eigen::Index i = 0; i < p_.size(); ++i) {
      theta[i] += eps * relativistic_velocity(p_[i], layout_.mass[i], layout_.speed[i]);
    }
  }

  RelativisticLayout layout_;
};

}  // namespace

RulePtr make_rhmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<RhmcRule>(s, p, n, seed);
}

}  // namespace credence::samplers
