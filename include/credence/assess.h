// assess: scoring a run's ensemble on labelled rows, the work behind `credence assess`,
// which `report`, `compare` and the Python module reuse. Reads the table, picks the rows
// (the run's stored test or validation rows, or every row), checks the data file against
// the run's SHA-256, runs the ensemble, scores it and optionally fits a temperature on
// the validation rows. Every call is pure on its arguments: safe from several threads
// on different RunReaders.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "credence/ensemble.h"
#include "credence/metrics.h"
#include "credence/predict.h"

namespace credence {

// Small-data warnings of an assessment (ours, common practice with no single source):
// bootstrap intervals on fewer rows than this are rough (the usual "about 30" for
// resampling).
inline constexpr std::size_t kFewBootstrapRows = 30;
// A temperature fitted on fewer validation rows than this may not carry over.
inline constexpr std::size_t kFewTemperatureRows = 50;

/// Which rows of the data file are scored.
enum class AssessSplit {
  kAuto,  // the stored test rows when the file is the run's data file, else every row
  kTest,  // the stored held-out rows (the file must be the run's data file)
  kVal,   // the stored validation rows (idem)
  kAll,   // every row of the file
};

struct AssessJobOptions {
  AssessSplit split = AssessSplit::kAuto;
  AssessSettings metrics;               // bins, bootstrap
  Binning binning = Binning::kEqualWidth;  // the headline ECE and table
  std::int64_t samples = 0;             // 0: every kept sample
  std::optional<double> temperature;    // member-wise; empty: the run's stored one
  bool fit_temperature = false;         // fit tau on the validation rows and score both
  std::string truth_path;               // synth truth file (p_<class> per data row)
  std::optional<UnseenPolicy> unseen;   // empty: the run's own policy
  std::optional<std::string> positive_class;  // two classes; empty: the run's, else the second
  ThresholdSettings threshold;          // two classes: how the decision threshold is chosen
};

/// The true class probabilities of the scored rows, compared with the model's.
struct TruthScores {
  double kl = 0;        // mean_i KL(truth_i || pbar_i), nats
  double mae = 0;       // mean over rows and classes of |pbar_ik - truth_ik|
  double truth_nll = 0; // NLL of the true probabilities on the labels (the floor)
  double model_nll = 0; // the model's NLL on the same rows, for comparison
};

/// An assessment of one set of probabilities (before or after temperature scaling).
struct ScoredEnsemble {
  double temperature = 1;
  Assessment metrics;                // of the model average
  UncertaintySplit split;            // per row: log pbar, H, E H, MI
  std::vector<MemberScores> members; // each kept sample alone
  std::optional<TruthScores> truth;
};

struct AssessJobResult {
  std::string split_name;            // "test", "validation", "all rows"
  std::vector<std::int64_t> rows;    // 0-based data rows scored
  std::vector<std::int32_t> labels;  // (n)
  std::vector<std::string> class_names;
  std::int64_t samples = 0;          // kept samples averaged
  std::string data_sha256;
  bool data_matches_run = false;     // the file's SHA-256 equals the run's
  ScoredEnsemble scored;             // with the run's temperature (or the one given)
  std::optional<TemperatureFit> fit; // when fit_temperature
  std::optional<ScoredEnsemble> calibrated;  // scored at the fitted temperature
  std::int64_t val_rows = 0;         // rows the temperature was fitted on
  std::optional<PositiveClass> positive;     // two classes only
  std::optional<DecisionReport> decisions;   // two classes only, of `scored`
};

/// Runs the whole assessment. Errors: kInvalidInput (exit 2) for a bad data file, a
/// split that needs the run's data file when another is given, or too few rows.
Result<AssessJobResult> run_assess_job(const RunReader& run, const std::string& data_path,
                                       const AssessJobOptions& options);

/// The run's delimiter and missing-value tokens, for reading tables like its data file.
ReadOptions read_options_of(const RunHeader& header);

/// Mean and sample standard deviation of one member score.
struct MeanSd {
  double mean = 0;
  double sd = 0;
};
MeanSd member_mean_sd(const std::vector<MemberScores>& members, double MemberScores::*score);

/// What `assess --save-temperature` stores in the run file: the temperature `result`
/// fitted (result.fit must be set) for an ensemble of `samples` kept samples, stamped with
/// the current UTC time.
StoredTemperature fitted_temperature_record(const AssessJobResult& result, std::int64_t samples);

}  // namespace credence
