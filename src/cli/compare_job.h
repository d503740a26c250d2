// `compare` and `sweep`: several trainings on one split and one gradient budget, each
// assessed on the same held-out rows, gathered for a table and a report.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "report/report_page.h"
#include "credence/train.h"

namespace credence::cli {

/// One training of a comparison: a method at a learning rate.
struct CompareEntry {
  Method method = Method::kSgld;
  std::optional<double> learning_rate;  // empty: the method's default
  std::string label;                    // "sghmc" or "sghmc lr=0.01"
  std::string file_stem;                // run file name without .h5
};

struct CompareRequest {
  std::string data_path;
  DataOptions data;              // resolved data flags (target, split seed, ...)
  std::vector<Index> hidden;     // the one network every method trains
  std::string activation = "relu";
  std::string net_path;
  std::vector<CompareEntry> entries;
  /// Gradient budget: passes over the training rows per chain; 0 = sized to the table
  /// (compare_budget). Default 0.
  double epochs = 0;
  int chains = 4;                // every method runs this many chains (optimizers: restarts)
  std::int64_t batch_rows = 128;
  /// Kept samples per chain for samplers when `samples_given`; otherwise sized by
  /// default_compare_samples (compare_samples.h).
  std::int64_t samples = 100;
  bool samples_given = false;
  std::string out_dir;
  std::string truth_path;        // optional synth truth file
  int bootstrap = 1000;
  /// A sampler whose verdict is not done after a budget sized to the table (no --epochs)
  /// is re-run once, longer, when the re-run's estimated wall time fits in this many
  /// seconds (compare_extend.h); 0: never.
  double extend_seconds = 0;
  /// Seed of every entry's chains; empty: the split's seed (as train's --chain-seed).
  std::optional<std::uint64_t> chain_seed;
  bool quiet = false;
  std::string command_line;
  /// Called with each entry's position in `entries` and its train request just before it
  /// trains (sweep's tuning map sets a cell's mass and max move); empty: nothing changed.
  std::function<void(std::size_t, TrainRequest&)> adjust_request;
};

/// The outcome of one entry: a loaded run, or why it has none.
struct CompareOutcome {
  CompareEntry entry;
  std::optional<MethodRun> run;  // empty when training failed or every chain diverged
  std::string failure;           // why, when run is empty
  bool diverged = false;         // some or all chains diverged
  std::string run_path;
  std::string budget_note;       // why this entry got less than asked (empty: nothing cut)
};

/// The steps per chain every method gets: ceil(epochs * train rows / batch) when epochs
/// is given; by default the budget a sampler gets from `credence train` (budget.h) for
/// the samples compare keeps, so samplers burn in and keep them at thin >= 10.
struct Budget {
  std::int64_t train_rows = 0;
  std::int64_t steps = 0;
  std::int64_t samples = 0;  // kept samples per sampler chain asked for (--samples or sized)
  std::string samples_note;  // why the sized default is below kCompareRhatDraws, or empty
  /// Sized to the table (no --epochs): a sampler's burn-in and thinning exactly as train
  /// sizes them (thin >= 10); with --epochs, empty and split by sampler_share.
  std::optional<std::int64_t> sized_burn_in;
  std::optional<std::int64_t> sized_thin;
};

/// How a sampler spends a budget of `steps`: half (at least) burns in, the rest is
/// thinned to `samples`; when fewer than `samples` steps remain, it keeps one sample per
/// remaining step and says so in `note`.
struct SamplerShare {
  std::int64_t burn_in = 0;
  std::int64_t thin = 1;
  std::int64_t samples = 0;
  std::string note;  // empty unless samples were cut
};
SamplerShare sampler_share(std::int64_t steps, std::int64_t samples);
/// The share a sampler gets of `budget`: the sized burn-in and thinning when the budget
/// was sized to the table, else sampler_share(budget.steps, budget.samples).
SamplerShare sampler_share(const Budget& budget);
Result<Budget> compare_budget(const CompareRequest& request);

/// Trains every entry into out_dir/<file_stem>.h5 (overwriting), then assesses each on
/// the test rows. A diverged or failed entry is reported in its outcome, not as an error;
/// errors are bad input (exit 2) and I/O.
Result<std::vector<CompareOutcome>> run_compare(const CompareRequest& request);

/// The runs that trained, for score_table / report_page.
std::vector<MethodRun> trained_runs(const std::vector<CompareOutcome>& outcomes);

}  // namespace credence::cli
