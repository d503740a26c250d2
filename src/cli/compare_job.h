// `compare` and `sweep`: several trainings on one split and one gradient budget, each
// assessed on the same held-out rows, gathered for a table and a report.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "cli/report_page.h"
#include "cli/train_job.h"

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
  double epochs = 30;            // gradient budget: passes over the training rows per chain
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
};

/// The steps per chain every method gets: ceil(epochs * train rows / batch).
struct Budget {
  std::int64_t train_rows = 0;
  std::int64_t steps = 0;
};
Result<Budget> compare_budget(const CompareRequest& request);

/// Trains every entry into out_dir/<file_stem>.h5 (overwriting), then assesses each on
/// the test rows. A diverged or failed entry is reported in its outcome, not as an error;
/// errors are bad input (exit 2) and I/O.
Result<std::vector<CompareOutcome>> run_compare(const CompareRequest& request);

/// The runs that trained, for score_table / report_page.
std::vector<MethodRun> trained_runs(const std::vector<CompareOutcome>& outcomes);

}  // namespace credence::cli
