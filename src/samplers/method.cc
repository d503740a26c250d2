// Method names, settings validation, step-size conversion, Sampler::create and the
// default members of PotentialFn.
#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <string>

#include "credence/samplers.h"
#include "samplers/rule.h"

namespace credence {
namespace {

struct MethodEntry {
  Method method;
  std::string_view name;
};

constexpr std::array<MethodEntry, 12> kMethods = {{
    {Method::kSgld, "sgld"},
    {Method::kPsgld, "psgld"},
    {Method::kSghmc, "sghmc"},
    {Method::kRsghmc, "rsghmc"},
    {Method::kSgd, "sgd"},
    {Method::kMomentum, "momentum"},
    {Method::kRsgd, "rsgd"},
    {Method::kAdam, "adam"},
    {Method::kHmc, "hmc"},
    {Method::kRhmc, "rhmc"},
    {Method::kSanta, "santa"},
    {Method::kSantaOpt, "santa-opt"},
}};

Status bad(const std::string& field, const std::string& what) {
  return Status::invalid_input("sampler setting '" + field + "' " + what);
}

}  // namespace

std::string_view method_name(Method method) {
  for (const MethodEntry& entry : kMethods) {
    if (entry.method == method) return entry.name;
  }
  return "unknown";
}

Result<Method> parse_method(std::string_view name) {
  for (const MethodEntry& entry : kMethods) {
    if (entry.name == name) return entry.method;
  }
  std::string valid;
  for (const MethodEntry& entry : kMethods) {
    if (!valid.empty()) valid += ", ";
    valid += entry.name;
  }
  return Status::invalid_input("unknown method '" + std::string(name) +
                               "'; valid methods are: " + valid);
}

bool is_sampler(Method method) {
  switch (method) {
    case Method::kSgd:
    case Method::kMomentum:
    case Method::kRsgd:
    case Method::kAdam:
    case Method::kSantaOpt:
      return false;
    default:
      return true;
  }
}

double default_learning_rate(Method method) {
  switch (method) {
    case Method::kSanta:
    case Method::kSantaOpt:
      return kSantaLearningRate;
    case Method::kSgld:
      return kSgldLearningRate;
    case Method::kPsgld:
      return kPsgldLearningRate;
    default:
      return SamplerSettings{}.learning_rate;
  }
}

bool is_full_batch(Method method) { return method == Method::kHmc || method == Method::kRhmc; }

Status validate(const SamplerSettings& s) {
  if (!(s.step_size >= 0) || !std::isfinite(s.step_size)) {
    return bad("step_size", "must be >= 0 (0 derives it from learning_rate)");
  }
  if (s.step_size == 0 && !(s.learning_rate > 0 && std::isfinite(s.learning_rate))) {
    return bad("learning_rate", "must be > 0 when step_size is 0");
  }
  if (!(s.temperature >= 0) || !std::isfinite(s.temperature)) {
    return bad("temperature", "must be finite and >= 0");
  }
  const ScheduleSettings& sc = s.schedule;
  if (sc.kind == ScheduleKind::kPolynomial) {
    if (!(sc.gamma > 0.5 && sc.gamma <= 1)) return bad("schedule.gamma", "must lie in (0.5, 1]");
    if (!(sc.end_ratio > 0 && sc.end_ratio < 1)) {
      return bad("schedule.end_ratio", "must lie in (0, 1)");
    }
  }
  if (sc.kind == ScheduleKind::kCyclical) {
    if (sc.cycles < 1) return bad("schedule.cycles", "must be >= 1");
    if (!(sc.exploration_fraction >= 0 && sc.exploration_fraction < 1)) {
      return bad("schedule.exploration_fraction", "must lie in [0, 1)");
    }
  }
  // A decreasing step needs kept samples weighted by their step (docs/methods.md section 1,
  // "Collecting the ensemble"); the run file keeps equal weights, so samplers refuse it.
  if (is_sampler(s.method) && !is_full_batch(s.method) && sc.kind == ScheduleKind::kPolynomial) {
    return bad("schedule.kind",
               "polynomial is for the optimizers (sgd, momentum, rsgd, adam) only: a sampler's "
               "kept samples would need weights proportional to their step size, which the "
               "run file does not store; use the constant or cyclical schedule");
  }
  if (is_full_batch(s.method) && sc.kind != ScheduleKind::kConstant) {
    return bad("schedule.kind", "must be constant for hmc and rhmc (they adapt eps themselves)");
  }
  if (!(s.psgld.rho > 0 && s.psgld.rho < 1)) return bad("psgld.rho", "must lie in (0, 1)");
  if (!(s.psgld.lambda >= 0)) return bad("psgld.lambda", "must be >= 0");
  if (!(s.psgld.max_preconditioner_ratio >= 0)) {
    return bad("psgld.max_preconditioner_ratio", "must be >= 0 (0 = no cap)");
  }
  if (!(s.sghmc.alpha > 0 && s.sghmc.alpha <= 1)) return bad("sghmc.alpha", "must lie in (0, 1]");
  if (s.sghmc.resample_every < 0) return bad("sghmc.resample_every", "must be >= 0");
  const RelativisticSettings& r = s.relativistic;
  if (!(r.speed >= 0) || !(r.mass >= 0) || !(r.friction >= 0) || !(r.max_move > 0)) {
    return bad("relativistic", "speed, mass and friction must be >= 0 and max_move > 0");
  }
  if (!(r.alpha > 0)) return bad("relativistic.alpha", "must be > 0");
  if (!(r.target_speed_ratio > 0.05 && r.target_speed_ratio < 0.95)) {
    return bad("relativistic.target_speed_ratio", "must lie in (0.05, 0.95)");
  }
  if (r.adapt_window < 1) return bad("relativistic.adapt_window", "must be >= 1");
  if (r.refresh_sweeps < 1) return bad("relativistic.refresh_sweeps", "must be >= 1");
  if (r.joint && s.method == Method::kRhmc) {
    return bad("relativistic.joint", "is not available for rhmc; use the per-coordinate form");
  }
  if (r.joint && !r.slices.empty()) {
    return bad("relativistic.slices", "cannot be combined with the joint form");
  }
  if (!(s.adam.beta1 >= 0 && s.adam.beta1 < 1) || !(s.adam.beta2 >= 0 && s.adam.beta2 < 1) ||
      !(s.adam.epsilon >= 0)) {
    return bad("adam", "needs beta1, beta2 in [0, 1) and epsilon >= 0");
  }
  const SantaSettings& sa = s.santa;
  if (!(sa.sigma > 0 && sa.sigma <= 1)) return bad("santa.sigma", "must lie in (0, 1]");
  if (!(sa.lambda >= 0) || !std::isfinite(sa.lambda)) return bad("santa.lambda", "must be >= 0");
  if (!(sa.max_preconditioner_ratio >= 0)) {
    return bad("santa.max_preconditioner_ratio", "must be >= 0 (0 = no cap)");
  }
  if (!(sa.friction >= 0) || !std::isfinite(sa.friction)) {
    return bad("santa.friction", "must be >= 0 (0 derives it from the first gradient)");
  }
  if (!(sa.optimizer_start_friction > 0 && sa.optimizer_start_friction < 1)) {
    return bad("santa.optimizer_start_friction", "must lie in (0, 1)");
  }
  if (!(sa.thermostat_gain >= 0) || !std::isfinite(sa.thermostat_gain)) {
    return bad("santa.thermostat_gain", "must be >= 0 (0 = the reference thermostat alone)");
  }
  if (!(sa.max_friction > 0 && sa.max_friction < 2)) {
    return bad("santa.max_friction", "must lie in (0, 2): past 2 the velocity grows every step");
  }
  if (!(sa.anneal_scale > 0) || !(sa.anneal_offset >= 0) || !(sa.anneal_power >= 0) ||
      !std::isfinite(sa.anneal_scale + sa.anneal_offset + sa.anneal_power)) {
    return bad("santa.anneal", "needs scale A > 0, offset B >= 0 and power gamma >= 0");
  }
  if (!(sa.exploration_fraction >= 0 && sa.exploration_fraction <= 1)) {
    return bad("santa.exploration_fraction", "must lie in [0, 1]");
  }
  if ((s.method == Method::kSanta || s.method == Method::kSantaOpt) &&
      sc.kind != ScheduleKind::kConstant) {
    return bad("schedule.kind",
               "must be constant for santa and santa-opt (they anneal their temperature "
               "themselves)");
  }
  if (s.hmc.leapfrog_steps < 1) return bad("hmc.leapfrog_steps", "must be >= 1");
  if (!(s.hmc.target_acceptance > 0 && s.hmc.target_acceptance < 1)) {
    return bad("hmc.target_acceptance", "must lie in (0, 1)");
  }
  if (!(s.hmc.jitter >= 0 && s.hmc.jitter < 1)) return bad("hmc.jitter", "must lie in [0, 1)");
  if (!(s.hmc.mass > 0)) return bad("hmc.mass", "must be > 0");
  return Status::ok_status();
}

Status validate(const SamplerSettings& s, std::int64_t parameters) {
  CREDENCE_RETURN_IF_ERROR(validate(s));
  if (parameters < 1) return Status::invalid_input("a sampler needs at least one parameter");
  const RelativisticSettings& r = s.relativistic;
  std::vector<RelativisticSlice> slices = r.slices;
  std::sort(slices.begin(), slices.end(),
            [](const auto& a, const auto& b) { return a.offset < b.offset; });
  std::int64_t end = 0;
  for (const RelativisticSlice& slice : slices) {
    if (slice.offset < end || slice.length < 1 || slice.offset + slice.length > parameters ||
        slice.mass < 0 || slice.speed < 0) {
      return bad("relativistic.slices",
                 fmt::format("[{}, {}) overlaps another slice, is empty, lies outside the {} "
                             "parameters, or has a negative mass or speed",
                             slice.offset, slice.offset + slice.length, parameters));
    }
    end = slice.offset + slice.length;
  }
  return Status::ok_status();
}

double base_step_size(const SamplerSettings& s, std::int64_t rows) {
  if (s.step_size > 0) return s.step_size;
  const double n = static_cast<double>(rows);
  switch (s.method) {
    case Method::kSgld:
    case Method::kPsgld:
    case Method::kSgd:
      return 2 * s.learning_rate / n;
    case Method::kSghmc:
    case Method::kMomentum:
    case Method::kSanta:
    case Method::kSantaOpt:
      return s.learning_rate / n;
    case Method::kAdam:
      return s.learning_rate;
    default:  // time-step methods: rsghmc, rsgd, hmc, rhmc
      return std::sqrt(s.learning_rate / n);
  }
}

Result<std::unique_ptr<Sampler>> Sampler::create(const SamplerSettings& settings,
                                                 std::int64_t parameters, std::int64_t rows,
                                                 std::uint64_t seed) {
  CREDENCE_RETURN_IF_ERROR(validate(settings, parameters));
  if (rows < 1) return Status::invalid_input("the potential reports no data rows (N < 1)");
  using namespace samplers;
  switch (settings.method) {
    case Method::kSgld:
    case Method::kSgd:
      return make_sgld(settings, parameters, rows, seed);
    case Method::kPsgld:
      return make_psgld(settings, parameters, rows, seed);
    case Method::kSghmc:
    case Method::kMomentum:
      return make_sghmc(settings, parameters, rows, seed);
    case Method::kRsghmc:
    case Method::kRsgd:
      return make_rsghmc(settings, parameters, rows, seed);
    case Method::kAdam:
      return make_adam(settings, parameters, rows, seed);
    case Method::kHmc:
      return make_hmc(settings, parameters, rows, seed);
    case Method::kRhmc:
      return make_rhmc(settings, parameters, rows, seed);
    case Method::kSanta:
    case Method::kSantaOpt:
      return make_santa(settings, parameters, rows, seed);
  }
  return Status::internal("unhandled method in Sampler::create");
}

Status PotentialFn::full(ConstThetaRef, ThetaRef, double&) {
  return Status::invalid_input(
      "this potential has no full-data evaluation; hmc and rhmc need one (use a "
      "stochastic-gradient method, or a potential that implements full())");
}

bool PotentialFn::gradient_noise_variance(ThetaRef) { return false; }

std::optional<double> PotentialFn::noise_temperature() const { return std::nullopt; }
Status PotentialFn::before_step(ConstThetaRef, std::int64_t, bool& changed) {
  changed = false;
  return Status::ok_status();
}

std::span<const double> PotentialFn::hyperparameters() const { return {}; }
bool PotentialFn::prior_precision(ThetaRef /*precision*/) const { return false; }

void PotentialFn::save_state(NamedArrays&) const {}

Status PotentialFn::restore_state(const NamedArrays&) { return Status::ok_status(); }

}  // namespace credence
