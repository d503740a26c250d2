// Default step budgets sized to the table: stated in passes over the training rows, with
// floors (and caps) in steps, so a 100-row table and a 1,000,000-row table both get a run
// that converges and finishes in minutes (DESIGN.md section 6).
#pragma once

#include <cstdint>
#include <set>
#include <string>

#include "credence/run_settings.h"

namespace credence {

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
  bool max_move = false;     // rsghmc's --max-move (or --speed, which replaces it)
  bool learning_rate = false;  // --lr
};

/// Which budget flags `given` (flag names such as "--burn-in") holds: the command line's
/// and the Python keywords' one reading.
BudgetGiven budget_given_of(const std::set<std::string>& given);

/// The defaults, in one place so the help text, README and code agree.
/// Samplers: burn-in  max(floor steps, kSamplerBurnInPasses passes), capped at
/// kSamplerPhaseCap steps; sampling phase max(floor steps, kSamplerSamplingPasses passes),
/// capped likewise, thinned to `samples` kept draws with thin >= kSamplerThinFloor. The
/// floor is sampler_floor_steps(N): kSamplerSmallTableFloor steps on a table of at most
/// kSamplerSmallTableRows training rows, falling as 1/N (the same rows x steps) to
/// kSamplerBurnInFloor (kSamplerSamplingFloor) steps at 5 x kSamplerSmallTableRows rows.
/// hmc and rhmc, whose every iteration reads all rows L times: kFullBatchBurnIn
/// iterations, then kFullBatchSampling thinned to `samples` (measured on 100 rows: R-hat
/// 1.01-1.02 either way, at half the time of the stochastic samplers' floors).
/// Optimizers: max(kOptimizerFloor steps, kOptimizerPasses passes), capped at
/// kOptimizerCap steps; early stopping on validation NLL usually ends them sooner.
struct BudgetDefaults {
  static constexpr std::int64_t kSamplerBurnInFloor = 2000;
  static constexpr double kSamplerBurnInPasses = 3;
  static constexpr std::int64_t kSamplerSamplingFloor = 2000;
  // Small tables: 10,000 steps per phase up to 128 training rows. Measured at defaults
  // (hidden 32,32, 4 chains; tests/tools/evaluate_defaults.py's tables) with sgld, sghmc
  // and rsghmc, 10,000 steps per phase against 2,000: test NLL lower in all 18 runs on
  // the 100-row subsamples of breast cancer, iris, wine and digits and on iris and wine
  // (e.g. wine sgld 0.167 -> 0.139, digits 100-row sgld 0.916 -> 0.777): at 2,000 steps
  // the chains have not yet spread over the posterior of a network whose prior, not the
  // data, sets most weights. Mixed on the 100-row subsamples of anes96 (-0.006 to
  // +0.018), fair (-0.008 to +0.004) and the rare-positives table (0 to +0.024), and
  // worse on spector (22 training rows, 6 test rows: +0.09 to +0.13). Such a step reads
  // at most 128 rows, so a phase still takes a few seconds.
  static constexpr std::int64_t kSamplerSmallTableFloor = 10000;
  static constexpr std::int64_t kSamplerSmallTableRows = 128;
  static constexpr double kSamplerSamplingPasses = 3;
  static constexpr std::int64_t kSamplerPhaseCap = 60000;
  static constexpr std::int64_t kSamplerThinFloor = 10;
  static constexpr std::int64_t kFullBatchBurnIn = 1000;
  static constexpr std::int64_t kFullBatchSampling = 1000;
  static constexpr std::int64_t kOptimizerFloor = 4000;
  static constexpr double kOptimizerPasses = 20;
  static constexpr std::int64_t kOptimizerCap = 120000;
};

/// The sampler phases' floor in steps for `train_rows` training rows (`base_floor` on
/// large tables): clamp(kSamplerSmallTableFloor x kSamplerSmallTableRows / rows,
/// base_floor, kSamplerSmallTableFloor).
std::int64_t sampler_floor_steps(std::int64_t train_rows, std::int64_t base_floor);

/// Minibatch steps in one pass over `train_rows` rows: ceil(rows / min(batch, rows)).
std::int64_t steps_per_pass(std::int64_t train_rows, std::int64_t batch_rows);

/// Fills every budget field the user did not give from the table size (train_rows) and
/// the batch size; for optimizers also sets the chain layout to one kept iterate.
/// Returns one line saying what was chosen and why, for the log.
std::string size_budget(TrainSettings& settings, std::int64_t train_rows, const BudgetGiven& given);

/// rsghmc's largest move per coordinate and step, when not given:
/// min(kMaxMoveCap, kMaxMoveOverSghmcMove x sqrt(lr / train_rows)), lr being sghmc's sized
/// --lr (sghmc_sized_learning_rate), so at the target speed ratio 1/2 rsghmc's typical
/// move per step matches sghmc's sqrt(lr / N) at its default. The posterior's width shrinks
/// as 1/sqrt(N) while a fixed move does not: at 1e-2 on a 700,000-row linear table the
/// chains wandered far wider than the posterior and ended near-constant (test NLL 0.684
/// against the truth's 0.401). Measured on the demo table (2,100 training rows; 4 chains,
/// 150,000 steps each, 3 chain seeds), the old 0.2 / sqrt(N) = 0.00436 against this rule's
/// 0.0093 (0.0087 measured): median probe-row bulk-ESS 730-775 -> 1,364-1,371, worst
/// 246-365 -> 606-746, test NLL 0.3140 -> 0.3129; 0.013 and 0.017 were worse again (worst
/// ESS 290 and 88). The cap 0.01 now holds up to 1,600 training rows (400 before); on
/// 700,000 rows the move is 7.6e-4 (2.4e-4 before).
/// Returns a log line, empty when nothing was chosen.
std::string size_max_move(TrainSettings& settings, std::int64_t train_rows,
                          const BudgetGiven& given);
inline constexpr double kMaxMoveCap = 1e-2;
inline constexpr double kMaxMoveOverSghmcMove = 2;

/// sghmc's and sgld's --lr, when not given: clamp(per_sqrt_row x sqrt(train_rows), floor,
/// cap): sghmc 0.001 x sqrt(rows) between 0.01 and 0.1 (0.01 up to 100 training rows, 0.02
/// at 400, 0.046 at 2,100, 0.1 from 10,000); sgld 0.01 x sqrt(rows) between 0.1 and 0.3
/// (0.1 up to 100 rows, 0.2 at 400, 0.3 from 900). Our rule, fitted to measurements
/// (docs/prior.md, "sghmc's and sgld's step"), not taken from a source. Flat rates fail one
/// way or the other: sghmc at 0.05 collapsed the 64-input digits subsample and at 0.1 eight
/// tables under 400 rows, sgld at 1.0 three tables under 400 rows, while on the demo table
/// (2,100 training rows) the flat old defaults mixed about 5 times slower over the same
/// 150,000 steps per chain (worst probe-row bulk-ESS: sghmc 172 at 0.01, 1,180 at 0.1;
/// sgld 179 at 0.1, 905 at 0.3). Small tables let the weights wander to where the loss
/// curves sharply; large ones hold them near well-curved modes.
/// Returns a log line, empty when nothing was chosen.
std::string size_learning_rate(TrainSettings& settings, std::int64_t train_rows,
                               const BudgetGiven& given);
inline constexpr double kSghmcLrPerSqrtRow = 1e-3;
inline constexpr double kSghmcLrFloor = 1e-2;
inline constexpr double kSghmcLrCap = 1e-1;
inline constexpr double kSgldLrPerSqrtRow = 1e-2;
inline constexpr double kSgldLrFloor = kSgldLearningRate;
inline constexpr double kSgldLrCap = 3e-1;

/// sghmc's default --lr for `train_rows` training rows (>= 1): clamp(kSghmcLrPerSqrtRow x
/// sqrt(rows), kSghmcLrFloor, kSghmcLrCap).
double sghmc_sized_learning_rate(std::int64_t train_rows);

}  // namespace credence
