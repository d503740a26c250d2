// Default step budgets sized to the table: stated in passes over the training rows, with
// floors (and caps) in steps, so a 100-row table and a 1,000,000-row table both get a run
// that converges and finishes in minutes (DESIGN.md section 6).
#pragma once

#include <cstdint>
#include <string>

#include "cli/run_settings.h"

namespace credence::cli {

/// Which budget flags the user gave; a flag given keeps its value, the others are sized
/// from the table.
struct BudgetGiven {
  bool burn_in = false;
  bool thin = false;
  bool samples = false;
  bool steps = false;
  bool epochs = false;
  bool check_every = false;  // early stopping's --check-every, --patience, --min-steps
  bool patience = false;
  bool min_steps = false;
};

/// The defaults, in one place so the help text, README and code agree.
/// Samplers: burn-in  max(kSamplerBurnInFloor steps, kSamplerBurnInPasses passes), capped
/// at kSamplerPhaseCap steps; sampling phase max(kSamplerSamplingFloor steps,
/// kSamplerSamplingPasses passes), capped likewise, thinned to `samples` kept draws with
/// thin >= kSamplerThinFloor.
/// hmc and rhmc, whose every iteration reads all rows L times: kFullBatchBurnIn
/// iterations, then kFullBatchSampling thinned to `samples` (measured on 100 rows: R-hat
/// 1.01-1.02 either way, at half the time of the stochastic samplers' floors).
/// Optimizers: max(kOptimizerFloor steps, kOptimizerPasses passes), capped at
/// kOptimizerCap steps; early stopping on validation NLL usually ends them sooner.
struct BudgetDefaults {
  static constexpr std::int64_t kSamplerBurnInFloor = 2000;
  static constexpr double kSamplerBurnInPasses = 3;
  static constexpr std::int64_t kSamplerSamplingFloor = 2000;
  static constexpr double kSamplerSamplingPasses = 3;
  static constexpr std::int64_t kSamplerPhaseCap = 60000;
  static constexpr std::int64_t kSamplerThinFloor = 10;
  static constexpr std::int64_t kFullBatchBurnIn = 1000;
  static constexpr std::int64_t kFullBatchSampling = 1000;
  static constexpr std::int64_t kOptimizerFloor = 4000;
  static constexpr double kOptimizerPasses = 20;
  static constexpr std::int64_t kOptimizerCap = 120000;
};

/// Minibatch steps in one pass over `train_rows` rows: ceil(rows / min(batch, rows)).
std::int64_t steps_per_pass(std::int64_t train_rows, std::int64_t batch_rows);

/// Fills every budget field the user did not give from the table size (train_rows) and
/// the batch size; for optimizers also sets the chain layout to one kept iterate.
/// Returns one line saying what was chosen and why, for the log.
std::string size_budget(TrainSettings& settings, std::int64_t train_rows, const BudgetGiven& given);

}  // namespace credence::cli
