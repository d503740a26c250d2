// Rule: the checked potential evaluation and state helpers every method shares.
#include "samplers/rule.h"

#include <fmt/format.h>

#include <cmath>
#include <string>

namespace credence::samplers {
namespace {

// x * 0 is 0 for finite x and NaN for an infinity or a NaN, and a NaN survives the sum:
// a branch-free pass over 16 float lanes, where Eigen's allFinite() tests every entry.
bool all_finite(const float* __restrict x, std::int64_t n) {
  constexpr std::int64_t kLanes = 16;
  float lanes[kLanes] = {};
  std::int64_t i = 0;
  for (; i + kLanes <= n; i += kLanes) {
    for (std::int64_t j = 0; j < kLanes; ++j) lanes[j] += x[i + j] * 0.0f;
  }
  for (std::int64_t j = 0; i < n; ++i, ++j) lanes[j] += x[i] * 0.0f;
  float total = 0;
  for (float lane : lanes) total += lane;
  return total == 0.0f;
}

}  // namespace

Rule::Rule(const SamplerSettings& settings, std::int64_t parameters, std::int64_t rows,
           std::uint64_t seed)
    : settings_(settings),
      parameters_(parameters),
      rows_(rows),
      base_step_(credence::base_step_size(settings, rows)),
      rng_(seed),
      grad_(Eigen::VectorXf::Zero(parameters)),
      noise_(Eigen::VectorXf::Zero(parameters)) {}

Status Rule::evaluate_minibatch(ConstThetaRef theta, PotentialFn& potential, StepReport& report) {
  MinibatchValue value;
  CREDENCE_RETURN_IF_ERROR(potential.minibatch(theta, grad_, value));
  report.potential = value.potential;
  report.accuracy = value.accuracy;
  if (!std::isfinite(value.potential)) {
    return Status::diverged("the potential is not finite");
  }
  if (!all_finite(grad_.data(), parameters_)) {
    return Status::diverged("the gradient is not finite");
  }
  return Status::ok_status();
}

Status Rule::evaluate_full(ConstThetaRef theta, PotentialFn& potential, Eigen::VectorXf& grad,
                           double& value) {
  return potential.full(theta, grad, value);
}

Status Rule::gradient_noise_variance(PotentialFn& potential, Eigen::VectorXf& vhat) const {
  if (potential.gradient_noise_variance(vhat)) return Status::ok_status();
  return Status::invalid_input(fmt::format(
      "{}'s gradient-noise correction needs the per-coordinate variance of the minibatch "
      "gradient, and this potential does not estimate it (the table potential does not); "
      "switch the correction off",
      method_name(settings_.method)));
}

double Rule::temperature(const StepContext& context) const {
  if (context.explore || !is_sampler(settings_.method)) return 0.0;
  return settings_.temperature;
}

void Rule::save_common(SamplerState& state) const {
  state.words["rng"] = rng_.state();
  state.words["steps_taken"] = {steps_taken_};
}

Status Rule::restore_common(const SamplerState& state) {
  auto rng = state.words.find("rng");
  auto steps = state.words.find("steps_taken");
  if (rng == state.words.end() || steps == state.words.end() || steps->second.size() != 1) {
    return Status::corrupt("sampler state lacks 'rng' or 'steps_taken'");
  }
  if (!rng_.set_state(rng->second)) {
    return Status::corrupt("sampler state 'rng' has " + std::to_string(rng->second.size()) +
                           " words or an all-zero lane; expected " +
                           std::to_string(Rng::kStateWords));
  }
  steps_taken_ = steps->second[0];
  return Status::ok_status();
}

Status Rule::restore_vector(const SamplerState& state, const std::string& name,
                            Eigen::VectorXf& into) {
  auto it = state.floats.find(name);
  if (it == state.floats.end()) return Status::corrupt("sampler state lacks '" + name + "'");
  if (static_cast<Eigen::Index>(it->second.size()) != into.size()) {
    return Status::corrupt("sampler state '" + name + "' has " + std::to_string(it->second.size()) +
                           " values; expected " + std::to_string(into.size()));
  }
  into = Eigen::Map<const Eigen::VectorXf>(it->second.data(), into.size());
  return Status::ok_status();
}

Status Rule::restore_double(const SamplerState& state, const std::string& name, double& into) {
  auto it = state.doubles.find(name);
  if (it == state.doubles.end() || it->second.size() != 1) {
    return Status::corrupt("sampler state lacks the number '" + name + "'");
  }
  into = it->second[0];
  return Status::ok_status();
}

}  // namespace credence::samplers
