// Step-size schedules: constant, polynomial decay (SGLD, ICML 2011) and cyclical
// cosine (Cyclical SG-MCMC, ICLR 2020); docs/methods.md sections 2 and 8.
#include <cassert>
#include <cmath>
#include <numbers>

#include "credence/samplers_settings.h"

namespace credence {

void fit_polynomial_decay(double start, double end, double gamma, std::int64_t n_total, double& a,
                          double& b) {
  assert(start > end && end > 0 && gamma > 0 && n_total >= 1);
  b = static_cast<double>(n_total) / (std::pow(start / end, 1.0 / gamma) - 1.0);
  a = start * std::pow(b, gamma);
}

StepSchedule::StepSchedule(const ScheduleSettings& settings, double base_step,
                           std::int64_t total_steps)
    : settings_(settings), base_(base_step) {
  assert(base_step > 0 && total_steps >= 1);
  if (settings.kind == ScheduleKind::kPolynomial) {
    fit_polynomial_decay(base_step, base_step * settings.end_ratio, settings.gamma, total_steps, a_,
                         b_);
  }
  if (settings.kind == ScheduleKind::kCyclical) {
    // L = ceil(K / M); a last cycle cut short when M does not divide K.
    cycle_length_ = (total_steps + settings.cycles - 1) / settings.cycles;
  }
}

double StepSchedule::step_size(std::int64_t t) const {
  switch (settings_.kind) {
    case ScheduleKind::kConstant:
      return base_;
    case ScheduleKind::kPolynomial:
      return a_ * std::pow(b_ + static_cast<double>(t), -settings_.gamma);
    case ScheduleKind::kCyclical: {
      // r = mod(k - 1, L) / L with k = t + 1; alpha = (alpha_0 / 2)(cos(pi r) + 1).
      const double r = static_cast<double>(t % cycle_length_) / static_cast<double>(cycle_length_);
      return base_ / 2 * (std::cos(std::numbers::pi * r) + 1);
    }
  }
  return base_;
}

bool StepSchedule::exploring(std::int64_t t) const {
  if (settings_.kind != ScheduleKind::kCyclical) return false;
  const double r = static_cast<double>(t % cycle_length_) / static_cast<double>(cycle_length_);
  return r < settings_.exploration_fraction;
}

}  // namespace credence
