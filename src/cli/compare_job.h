// `compare` and `sweep`: several trainings on one split and one gradient budget, each
// assessed on the same held-out rows, gathered for a table and a report.
#pragma once

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
  std::int64_t samples = 100;    // kept samples per chain for samplers
  std::string out_dir;
  std::string truth_path;        // optional synth truth file
  int bootstrap = 1000;
  bool quiet = false;
  std::string command_line;
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
/// is given; by default the budget a sampler gets from `credence train` (budget.h), at
/// least kCompareFloor steps, so samplers burn in and keep --samples samples at
/// thin >= 10 on tables of a few hundred rows.
struct Budget {
  std::int64_t train_rows = 0;
  std::int64_t steps = 0;
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
Result<Budget> compare_budget(const CompareRequest& request);

/// Trains every entry into out_dir/<file_stem>.h5 (overwriting), then assesses each on
/// the test rows. A diverged or failed entry is reported in its outcome, not as an error;
/// errors are bad input (exit 2) and I/O.
Result<std::vector<CompareOutcome>> run_compare(const CompareRequest& request);

/// The runs that trained, for score_table / report_page.
std::vector<MethodRun> trained_runs(const std::vector<CompareOutcome>& outcomes);

}  // namespace credence::cli
