// The held-out score that stops an optimizer early: the mean NLL of (up to
// kHeldOutRowsMax of) the validation rows, and the early-stopping defaults sized to the
// table.
#pragma once

#include <cstdint>
#include <string>
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
/// Check every clamp(one pass, kEveryMin, kEveryMax) steps, stop after
/// max(kPatience, ceil(kPatienceSteps / every)) checks without a gain, never before
/// min(budget, max(kMinStepsFloor, kMinStepsPasses passes)).
struct EarlyStopDefaults {
  static constexpr std::int64_t kEveryMin = 25;
  static constexpr std::int64_t kEveryMax = 1000;
  static constexpr std::int64_t kPatience = 20;
  // At least 1500 steps without a gain before stopping: under --prior-scale auto the
  // evidence updates move the prior every 200 steps on a small table
  // (posterior/precision_evidence.h), so 500 steps without a gain is too short a wait for
  // the network to settle after one (our reading; the gain below is measured). 20 checks of 25 steps (500 steps)
  // stopped adam on breast cancer (398 training rows) at test NLL 0.101; 1500 steps
  // (60 checks): 0.060. Measured on tests/tools/evaluate_defaults.py's 15 tables but
  // the 1,000,000-row one (adam and sgd): better by 0.002-0.008 for sgd on breast
  // cancer's, iris's and wine's 100-row subsamples and anes96, and adam on fair; worse
  // by 0.010-0.012 for adam on anes96 and the rare-positives 100-row table, by up to
  // 0.007 in 3 more runs; unchanged in the rest. A table with one pass of 75 steps or
  // more keeps 20 checks.
  static constexpr std::int64_t kPatienceSteps = 1500;
  static constexpr std::int64_t kMinStepsFloor = 1000;
  static constexpr double kMinStepsPasses = 2;
};
/// `missing_class`: a class the training rows hold and the validation rows do not ("" when
/// none). Then early stopping is off unless the user gave --check-every or --patience:
/// the validation NLL of rows without that class rewards a network that never predicts
/// it, so the "best" iterate is the prior's near-constant start. Measured on
/// tests/tools/evaluate_defaults.py's 100-row rare-positives table (3 positives, none among
/// the 10 validation rows), test NLL: momentum 0.298 -> 0.236, rsgd 0.355 -> 0.236,
/// sgd 0.218 -> 0.208, adam 0.220 -> 0.268 (one positive among 20 test rows decides
/// these). Returns a note saying so, or "".
std::string size_early_stop(TrainSettings& settings, std::int64_t train_rows,
                            std::int64_t validation_rows, const BudgetGiven& given,
                            const std::string& missing_class = {});

}  // namespace credence
