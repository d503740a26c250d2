// The held-out score that stops an optimizer early: the mean NLL of (up to
// kHeldOutRowsMax of) the validation rows, and the early-stopping defaults sized to the
// table.
#pragma once

#include <cstdint>
#include <vector>

#include "credence/budget.h"
#include "credence/net.h"
#include "credence/samplers.h"
#include "credence/table_potential.h"

namespace credence {

/// Validation rows scored per check, at most: 20,000 rows put the standard error of a
/// mean NLL near 0.005 or below, and cost a few milliseconds per check for small
/// networks. Larger validation splits are thinned evenly.
inline constexpr std::int64_t kHeldOutRowsMax = 20000;

/// Up to `max_rows` of `validation`, spread evenly over it (all when it is smaller).
std::vector<std::int64_t> held_out_rows(const std::vector<std::int64_t>& validation,
                                        std::int64_t max_rows = kHeldOutRowsMax);

/// A scorer per chain: each owns its network workspace, so chains score in parallel.
/// `rows` must outlive every scorer made.
std::function<HeldOutScore(int chain)> held_out_nll(const ParamLayout& layout,
                                                    const TrainingRows& rows);

/// Early-stopping defaults for optimizers (the fields of `given` the user did not give),
/// with `validation_rows` rows to score on: off for samplers and without validation rows.
/// Check every clamp(one pass, kEveryMin, kEveryMax) steps, stop after kPatience checks
/// without a gain, never before min(budget, max(kMinStepsFloor, kMinStepsPasses passes)).
struct EarlyStopDefaults {
  static constexpr std::int64_t kEveryMin = 25;
  static constexpr std::int64_t kEveryMax = 1000;
  static constexpr std::int64_t kPatience = 20;
  static constexpr std::int64_t kMinStepsFloor = 1000;
  static constexpr double kMinStepsPasses = 2;
};
void size_early_stop(TrainSettings& settings, std::int64_t train_rows,
                     std::int64_t validation_rows, const BudgetGiven& given);

}  // namespace credence
