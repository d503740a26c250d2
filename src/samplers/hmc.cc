// Full-batch HMC with a diagonal Gaussian kinetic energy.
//
// "Hybrid Monte Carlo", Physics Letters B 1987; "MCMC using Hamiltonian dynamics",
// Handbook of MCMC 2011; docs/methods.md section 6:
//   p ~ N(0, m T),  K = p^T p / (2 m),  v(p) = p / m,  leapfrog + Metropolis
#include <cmath>

#include "samplers/hamiltonian.h"

namespace credence::samplers {
namespace {

class HmcRule final : public HamiltonianRule {
 public:
  HmcRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed)
      : HamiltonianRule(s, p, n, seed), mass_(static_cast<float>(s.hmc.mass)) {}

 private:
  void refresh_momentum(double temperature) override {
    draw_noise();
    p_ = static_cast<float>(std::sqrt(mass_ * temperature)) * noise_;
  }
  double kinetic_energy() const override { return p_.cast<double>().squaredNorm() / (2.0 * mass_); }
  void drift(ThetaRef theta, float eps) override { theta.noalias() += (eps / mass_) * p_; }

  float mass_;
};

}  // namespace

RulePtr make_hmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<HmcRule>(s, p, n, seed);
}

}  // namespace credence::samplers
