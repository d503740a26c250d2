// compare as a library call: several trainings on one split, one network and one gradient
// budget, each assessed on the same held-out rows, gathered for a table and a report
// (`credence compare`, `credence sweep` through sweep.h, and the Python module).
//
// Usage:
//   CompareRequest r;
//   r.data_path = "faults.csv";
//   r.data.schema.target = "fault";
//   Result<std::vector<Method>> methods = complete_compare_request(r, {.methods = "adam,sghmc"});
//   for (Method m : *methods) r.entries.push_back(compare_entry(m));
//   r.out_dir = "faults-compare";
//   Result<CompareSummary> s = run_compare_job(r);  // trains, scores, writes summary.*
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "credence/method_run.h"
#include "credence/train.h"

namespace credence {

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
  /// --linear-path on: every method's network adds a linear map from the inputs to the
  /// outputs (docs/prior.md, "The linear path"). Not with net_path or no hidden layer.
  bool linear_path = false;
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
  /// Kernel Stein discrepancy of each sampler's kept draws (run_stein.h), at most this many
  /// evenly spaced draws per chain; 0 skips it (sweep and the tuning map do). 100 keeps it
  /// to about a second per method on the demo table (400 draws, n^2 kernel terms).
  std::int64_t stein_draws_per_chain = 100;
  /// Seed of every entry's chains; empty: the split's seed (as train's --chain-seed).
  std::optional<std::uint64_t> chain_seed;
  /// Every training's stop flag and progress callback (one callback serves them all).
  TrainHooks hooks;
  /// Told once, before any training, how much every method gets (budget_line); may be
  /// empty.
  std::function<void(const std::string&)> on_budget;
  std::string command_line;  // stored in every run file's provenance
  /// Called with each entry's position in `entries` and its train request just before it
  /// trains (sweep's tuning map sets a cell's mass and max move); empty: nothing changed.
  std::function<void(std::size_t, TrainRequest&)> adjust_request;
};

/// An entry for `method` at its default learning rate, labelled and named by the method.
CompareEntry compare_entry(Method method);

/// What compare reads as text: the method list and the network's widths.
struct CompareLists {
  std::string methods;           // comma-separated: "adam,sghmc"
  /// Hidden-layer widths; "none": no hidden layer. Not read with a net_path.
  std::string hidden = "32,32";
  bool extend_given = false;     // extend_seconds was given (refused with epochs)
  /// Accept hmc and rhmc, whose steps read every row: only the tuning map sets it, as it
  /// gives rhmc's cells a budget of their own in passes (sweep.h). Default false.
  bool full_batch_allowed = false;
};

/// Checks `request` (filled in but for entries and hidden), sets its hidden widths from
/// `lists` and returns the methods of lists.methods. Refuses (kInvalidInput, naming the
/// flag): no target, an unknown method or a full-data one (hmc, rhmc, which have no
/// minibatch budget to share; unless lists.full_batch_allowed), --samples with only
/// optimizers, bad widths, --linear-path on with a net file or with no hidden layer,
/// --extend-seconds with --epochs, and out-of-range epochs, chains, batch, samples or
/// bootstrap.
Result<std::vector<Method>> complete_compare_request(CompareRequest& request,
                                                     const CompareLists& lists);

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
struct CompareBudget {
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
SamplerShare sampler_share(const CompareBudget& budget);
Result<CompareBudget> compare_budget(const CompareRequest& request);

/// The one line that says what every method gets ("every method: 4000 steps per chain x
/// 4 chains (...)"), without its newline.
std::string budget_line(const CompareRequest& request, const CompareBudget& budget);

/// Trains every entry into out_dir/<file_stem>.h5 (overwriting), then assesses each on
/// the test rows. A diverged or failed entry is reported in its outcome, not as an error;
/// errors are bad input (exit 2) and I/O. `budget`, when given, receives the budget
/// every entry got.
Result<std::vector<CompareOutcome>> run_compare(const CompareRequest& request,
                                                CompareBudget* budget = nullptr);

/// The runs that trained, for score_table / report_page.
std::vector<MethodRun> trained_runs(const std::vector<CompareOutcome>& outcomes);

/// A whole comparison and what it leaves in out_dir.
struct CompareSummary {
  std::vector<CompareOutcome> outcomes;
  std::string text;  // summary.txt: the score table, verdicts, failures, notes, cautions
  /// summary.csv: the score table, one row per method that trained, with snake_case
  /// headers and an empty cell for a number that does not apply (pandas reads numbers
  /// as numbers).
  std::string csv;
  /// summary.json: one object with the budget, the data, the split and the per-method
  /// rows ("methods"); docs/compare-files.md names every key.
  std::string json;
};

/// run_compare, then summary.txt, summary.csv, summary.json and report.html written into
/// out_dir (each atomically). kDiverged, listing why, when no method produced a usable run.
Result<CompareSummary> run_compare_job(const CompareRequest& request);

}  // namespace credence
