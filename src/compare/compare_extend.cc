// plan_extension, extend_share: compare's bounded re-run of a sampler that is not done.
#include "compare/compare_extend.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

namespace credence {
namespace {

bool more_steps_can_help(const RunVerdict& verdict) {
  for (const VerdictCheck& c : verdict.checks) {
    if (c.outcome != CheckOutcome::kFailed) continue;
    if (c.name == "drift" || c.name == "mixing" || c.name == "predictions" || c.name == "scale") {
      return true;
    }
  }
  return false;
}

}  // namespace

ExtendPlan plan_extension(const RunVerdict& verdict, std::int64_t steps_run, double seconds_run,
                          double max_seconds) {
  ExtendPlan plan;
  if (max_seconds <= 0 || steps_run < 1 || verdict.done()) return plan;
  if (!more_steps_can_help(verdict)) {
    plan.why = "not re-run: longer chains do not fix the failed checks";
    return plan;
  }
  const std::int64_t wanted = verdict.more_steps_per_chain
                                  ? steps_run + kExtendEstimateFactor * *verdict.more_steps_per_chain
                                  : kExtendFactorWithoutEstimate * steps_run;
  std::int64_t steps = std::min(wanted, kExtendMaxSteps);
  std::string bound = fmt::format("{} steps per chain", kExtendMaxSteps);
  if (seconds_run > 0) {
    // Wall time grows in proportion to the steps: same network, batch and chains.
    const double per_step = seconds_run / static_cast<double>(steps_run);
    const auto by_time = static_cast<std::int64_t>(std::floor(max_seconds / per_step));
    if (by_time < steps) {
      steps = by_time;
      bound = fmt::format("about {:g} s (--extend-seconds) at the first run's {:.3g} s per "
                          "thousand steps",
                          max_seconds, 1000 * per_step);
    }
  }
  if (steps < 2 * steps_run) {
    plan.why = fmt::format("not re-run: the limit of {} leaves under twice the first run's {} "
                           "steps per chain",
                           bound, steps_run);
    return plan;
  }
  plan.steps = steps;
  plan.why = fmt::format(
      "re-run from the start at {} steps per chain (the first run of {} ended \"{}\"; {} "
      "wanted{}, limit {})",
      steps, steps_run, verdict.headline, wanted,
      verdict.more_steps_per_chain ? " from the verdict's estimate" : " without an estimate",
      bound);
  return plan;
}

ExtendShare extend_share(std::int64_t steps, std::int64_t samples) {
  const std::int64_t kept = std::max<std::int64_t>(1, samples);
  ExtendShare share;
  share.thin = std::max<std::int64_t>(1, (steps - steps / 2) / kept);
  share.burn_in = std::max<std::int64_t>(0, steps - share.thin * kept);
  return share;
}

}  // namespace credence
