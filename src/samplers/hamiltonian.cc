// Metropolis-corrected leapfrog with step jitter and dual-averaging adaptation.
#include "samplers/hamiltonian.h"

#include <algorithm>
#include <cmath>
#include <limits>

namespace credence::samplers {
namespace {

constexpr double kGamma = 0.05, kT0 = 10, kKappa = 0.75;  // docs/methods.md section 6 [M]

}  // namespace

HamiltonianRule::HamiltonianRule(const SamplerSettings& s, std::int64_t p, std::int64_t n,
                                 std::uint64_t seed)
    : Rule(s, p, n, seed),
      p_(Eigen::VectorXf::Zero(p)),
      p_start_(Eigen::VectorXf::Zero(p)),
      theta_start_(Eigen::VectorXf::Zero(p)),
      grad_start_(Eigen::VectorXf::Zero(p)),
      eps_(base_step_),
      mu_(std::log(10 * base_step_)) {}

Status HamiltonianRule::step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
                             StepReport& report) {
  const HmcSettings& hs = settings_.hmc;
  const double temperature = this->temperature(context);
  if (!cached_) {
    CREDENCE_RETURN_IF_ERROR(evaluate_full(theta, potential, grad_, potential_));
    cached_ = true;
  }
  report.potential = potential_;
  if (!std::isfinite(potential_) || !grad_.allFinite()) {
    cached_ = false;
    return Status::diverged("the potential or its gradient is not finite at the current state");
  }
  if (!context.burn_in && hs.adapt_step && adapt_count_ > 0 && !adaptation_frozen_) {
    eps_ = std::exp(log_eps_bar_);
    adaptation_frozen_ = true;
  }
  refresh_momentum(temperature);
  const double jitter = 1.0 + hs.jitter * (2.0 * rng_.uniform() - 1.0);
  const auto eps = static_cast<float>(eps_ * jitter);
  theta_start_ = theta;
  grad_start_ = grad_;
  p_start_ = p_;
  const double u0 = potential_;
  double d_h = 0;
  begin_trajectory();
  CREDENCE_RETURN_IF_ERROR(leapfrog(theta, potential, eps, hs.leapfrog_steps, d_h));
  report.speed_ratio = trajectory_speed_ratio();
  double acceptance = 0.0;
  if (std::isfinite(d_h)) {
    if (temperature > 0) {
      acceptance = std::min(1.0, std::exp(-d_h / temperature));
    } else {
      acceptance = d_h <= 0 ? 1.0 : 0.0;
    }
    if (d_h > 1000 * temperature) ++divergent_;
  } else {
    ++divergent_;
  }
  if (std::isnan(acceptance)) acceptance = 0.0;
  if (rng_.uniform() < acceptance) {
    p_ = -p_;
  } else {
    theta = theta_start_;
    grad_ = grad_start_;
    p_ = p_start_;
    potential_ = u0;
  }
  if (context.burn_in && hs.adapt_step && !adaptation_frozen_) adapt_step(acceptance);
  report.step_size = eps;
  report.acceptance = acceptance;
  ++steps_taken_;
  return Status::ok_status();
}

Status HamiltonianRule::leapfrog(ThetaRef theta, PotentialFn& potential, float eps, int steps,
                                 double& energy_change) {
  if (!cached_) {
    CREDENCE_RETURN_IF_ERROR(evaluate_full(theta, potential, grad_, potential_));
    cached_ = true;
  }
  const double h0 = potential_ + kinetic_energy();
  bool finite = true;
  for (int l = 0; l < steps && finite; ++l) {
    p_.noalias() -= (eps / 2) * grad_;
    drift(theta, eps);
    CREDENCE_RETURN_IF_ERROR(evaluate_full(theta, potential, grad_, potential_));
    finite = std::isfinite(potential_) && grad_.allFinite();
    if (finite) p_.noalias() -= (eps / 2) * grad_;
  }
  energy_change =
      finite ? potential_ + kinetic_energy() - h0 : std::numeric_limits<double>::infinity();
  return Status::ok_status();
}

void HamiltonianRule::adapt_step(double acceptance) {
  const double m = static_cast<double>(++adapt_count_);
  const double delta = settings_.hmc.target_acceptance;
  h_bar_ = (1 - 1 / (m + kT0)) * h_bar_ + (delta - acceptance) / (m + kT0);
  const double log_eps = mu_ - std::sqrt(m) / kGamma * h_bar_;
  const double weight = std::pow(m, -kKappa);
  log_eps_bar_ = weight * log_eps + (1 - weight) * log_eps_bar_;
  eps_ = std::exp(log_eps);
}

SamplerState HamiltonianRule::save_state() const {
  SamplerState state;
  save_common(state);
  state.floats["p"] = to_floats(p_);
  state.doubles["step"] = {eps_};
  state.doubles["dual_averaging"] = {mu_, h_bar_, log_eps_bar_};
  state.words["adapt_count"] = {adapt_count_};
  state.words["adaptation_frozen"] = {adaptation_frozen_ ? 1u : 0u};
  state.words["divergent"] = {divergent_};
  save_extra(state);
  return state;
}

Status HamiltonianRule::restore_state(const SamplerState& state) {
  CREDENCE_RETURN_IF_ERROR(restore_common(state));
  CREDENCE_RETURN_IF_ERROR(restore_vector(state, "p", p_));
  CREDENCE_RETURN_IF_ERROR(restore_double(state, "step", eps_));
  auto da = state.doubles.find("dual_averaging");
  auto count = state.words.find("adapt_count");
  auto frozen = state.words.find("adaptation_frozen");
  auto divergent = state.words.find("divergent");
  if (da == state.doubles.end() || da->second.size() != 3 || count == state.words.end() ||
      frozen == state.words.end() || divergent == state.words.end() || count->second.size() != 1 ||
      frozen->second.size() != 1 || divergent->second.size() != 1) {
    return Status::corrupt("sampler state lacks the step-size adaptation arrays");
  }
  mu_ = da->second[0];
  h_bar_ = da->second[1];
  log_eps_bar_ = da->second[2];
  adapt_count_ = count->second[0];
  adaptation_frozen_ = frozen->second[0] != 0;
  divergent_ = divergent->second[0];
  cached_ = false;  // the full-data potential is deterministic: recomputed on demand
  return restore_extra(state);
}

}  // namespace credence::samplers
