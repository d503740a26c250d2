// predict: the Bayesian model average of a kept ensemble and its uncertainty, per row.
//
// A Predictor holds what a run file stores for prediction (the preprocessing, the
// network layout and the kept samples as a (P, S) matrix) and turns encoded rows into
// the model average pbar, the predictive entropy H[pbar] (total doubt), the expected
// entropy E H (aleatoric: noise in the data) and the mutual information MI = H - E H
// (epistemic: lack of data), docs/methods.md section 9.1. Each member's log-probabilities
// come from a float32 forward pass; the averaging and the entropies run in double.
// predict_csv() streams a CSV file through a Predictor in blocks of rows and writes
// the predictions CSV atomically.
//
// Threads: a Predictor is immutable after creation and safe to share between threads;
// a Workspace and an EnsembleAverager belong to one thread each. predict_csv() runs
// blocks in parallel with OpenMP.
//
//   Result<std::unique_ptr<RunReader>> run = RunReader::open("run.h5");
//   Result<Predictor> predictor = Predictor::create(**run, {.samples = 50});
//   PredictCsvOptions options;  // options.read: the run's delimiter and NA tokens
//   Result<PredictCsvSummary> done = predict_csv(*predictor, "new.csv", "pred.csv", options);
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "credence/data.h"
#include "credence/metrics.h"
#include "credence/named_arrays.h"
#include "credence/net.h"
#include "credence/status.h"

namespace credence {

class RunReader;

// ---------------------------------------------------------------------------------------
// Averaging members: docs/methods.md 9.1.

/// Per-row outputs of the model average over a block of B rows and K classes.
struct Prediction {
  Eigen::MatrixXd probabilities;        // (K, B) pbar = (1/S) sum_s p_s
  Eigen::VectorXd entropy;              // (B) H[pbar] = -sum_k pbar_k log pbar_k, in nats
  Eigen::VectorXd expected_entropy;     // (B) E H = (1/S) sum_s H[p_s] (aleatoric)
  Eigen::VectorXd mutual_information;   // (B) MI = H - E H >= 0 (epistemic)
  std::vector<std::int32_t> predicted;  // (B) argmax_k pbar_k; ties go to the lowest index
  Eigen::VectorXd confidence;           // (B) pbar of the predicted class
  /// (K, B) each, when EnsembleAverager::set_interval gave a level: the equal-tailed
  /// interval of each class's probability over the members (interval_of_members).
  Eigen::MatrixXd interval_lo;
  Eigen::MatrixXd interval_hi;
  /// (B) How far each encoded row lies from the training rows (input_distance): the
  /// largest |z| over its numeric inputs, the root mean square of those z (a distance from
  /// the training rows' centre, about 1 for a typical training row), and how many
  /// categorical inputs hold a category the training rows never showed (all zeros).
  Eigen::VectorXd farthest_z;
  Eigen::VectorXd rms_z;
  Eigen::VectorXi unseen_inputs;
  /// Rows whose H - E H came out negative from rounding and were set to 0.
  std::int64_t clamped = 0;
  /// Unseen categories encoded as zeros (UnseenPolicy::kIgnore), per column; filled by
  /// Predictor::predict_rows, which leaves the logging to its caller.
  std::vector<UnseenCategories> unseen;

  Index rows() const { return probabilities.cols(); }
};

/// Accumulates the members of an ensemble one at a time, with equal weights 1/S:
/// log pbar = logsumexp_s(log p_s) - log S (a running, max-shifted log-sum-exp, so no
/// member's tiny probability underflows the average), and E H from each member's
/// p log p computed from its log-probabilities, with 0 log 0 = 0.
///
///   EnsembleAverager averager;
///   averager.reset(K, B);
///   for (each sample) { network.forward(ws, theta_s, x); averager.add_member(ws.log_probs()); }
///   averager.finish(prediction);
class EnsembleAverager {
 public:
  /// Starts a new average over B rows and K classes; allocates only when the shape grows.
  /// With temperature tau != 1 every member is tempered first, softmax(log p_s / tau)
  /// (member-wise temperature scaling, fit_ensemble_temperature). REQUIRES: tau > 0.
  void reset(Index num_classes, Index rows, double temperature = 1.0);
  /// Adds one member's log-probabilities. REQUIRES: log_probs is (K, B) of reset().
  void add_member(const Eigen::Ref<const Eigen::MatrixXf>& log_probs);
  void add_member(const Eigen::Ref<const Eigen::MatrixXd>& log_probs);
  /// Members added since reset().
  std::int64_t members() const { return accumulator_.members(); }
  /// Also keep every member's probabilities so that finish() writes the equal-tailed
  /// interval at `level` of each class's probability (Prediction::interval_lo, _hi).
  /// 0 (the default) turns it off. REQUIRES: 0 <= level < 1.
  void set_interval(double level) { interval_level_ = level; }
  /// Writes the average and the uncertainty split into `out` (resized to (K, B)).
  /// REQUIRES: members() >= 1.
  void finish(Prediction& out) const;

 private:
  // The one implementation of docs/methods.md 9.1 (metrics.h); this class only turns its
  // result into a Prediction with classes and confidences.
  UncertaintyAccumulator accumulator_;
  mutable UncertaintySplit split_;  // finish()'s buffers, reused block after block
  double temperature_ = 1.0;
  Eigen::MatrixXd tempered_;        // (K, B) a tempered member, reused
  double interval_level_ = 0;
  std::vector<double> kept_;        // member s's (K, B) probabilities at [s K B, (s+1) K B)
  mutable std::vector<double> column_;  // the S values of one entry, reordered in finish()
};

/// The equal-tailed interval of `values` at `level`: numpy.quantile(values, [(1 - level)
/// / 2, (1 + level) / 2]) with its default 'linear' method (sorted_quantile), in O(n)
/// by partial ordering. Reorders `values`. REQUIRES: values non-empty, 0 < level < 1.
Interval interval_of_members(std::span<double> values, double level);

/// The largest |z| = |x - mean| / scale over the numeric inputs of each encoded row x
/// (D, B), the root mean square of those z (sqrt(sum z^2 / numeric inputs): the
/// standardised distance from the training mean, ignoring correlations, scaled so a
/// typical training row is near 1; 0 without numeric inputs), and the count of its
/// categorical inputs encoded as all zeros (a category the training rows never showed,
/// under UnseenPolicy::kIgnore). Constant training columns (scale 1, mean subtracted)
/// count too: any value but the constant lies outside them.
void input_distance(const Preprocessing& preprocessing, const Eigen::Ref<const Eigen::MatrixXf>& x,
                    Eigen::VectorXd& farthest_z, Eigen::VectorXd& rms_z,
                    Eigen::VectorXi& unseen_inputs);

/// `wanted` indices spread evenly over 0..available-1 (floor(i * available / wanted)),
/// in increasing order; every index when wanted is 0 or >= available.
std::vector<Index> spread_samples(Index available, Index wanted);

// ---------------------------------------------------------------------------------------
// The positive class of a two-class run: the event that thresholds, decisions, curves
// and per-row intervals are about.

struct PositiveClass {
  int index = 1;       // into Preprocessing::class_names
  std::string name;
  std::string chosen_by;  // "--positive-class", "the run's setting", or the default's words
};

/// `requested` when given (a class name); else the run's setting `positive_class`
/// (train --positive-class); else class 1, the class that sorts second. Empty for a run
/// with more than two classes when nothing is requested. kInvalidInput naming the classes
/// when a name is not one of them, or is given for a run with more than two classes.
Result<std::optional<PositiveClass>> resolve_positive_class(
    const Preprocessing& preprocessing, const Settings& settings,
    const std::optional<std::string>& requested);

// ---------------------------------------------------------------------------------------
// Predictor: a kept ensemble ready to predict.

struct PredictorOptions {
  /// Kept samples to use, spread evenly over the ensemble ordered by (chain, kept number)
  /// (spread_samples). Default 0: all of them. More than the run holds: all of them.
  std::int64_t samples = 0;
  /// Rows per forward pass at most, the width a Workspace is sized for. Default 512: small
  /// enough that a 4 MiB piece of wide rows still splits into several blocks for the
  /// threads, large enough that each product stays near the sgemm rate.
  std::int64_t block_rows = 512;
  /// Member-wise temperature (EnsembleAverager::reset). Empty (default): the temperature
  /// stored in the run by `assess --save-temperature`, or 1 when there is none.
  std::optional<double> temperature;
};

class Predictor {
 public:
  /// Reads the preprocessing, the net text and the committed samples of an opened run.
  /// kInvalidInput for a run with no kept sample or options.block_rows < 1; kCorrupt
  /// when the stored net text, preprocessing and parameter count disagree.
  static Result<Predictor> create(const RunReader& run, const PredictorOptions& options);
  /// The same from parts: `samples` is (P, S), one kept sample per column.
  static Result<Predictor> from_parts(Preprocessing preprocessing, const std::string& net_text,
                                      Eigen::MatrixXf samples, const PredictorOptions& options);

  const Preprocessing& preprocessing() const { return preprocessing_; }
  /// Overrides the run's policy for categories the training rows never showed.
  void set_unseen_policy(UnseenPolicy policy) { preprocessing_.unseen = policy; }
  const ParamLayout& layout() const { return network_.layout(); }
  Index num_samples() const { return samples_.cols(); }
  Index num_classes() const { return network_.layout().num_classes; }
  Index block_rows() const { return block_rows_; }
  /// The member-wise temperature every prediction uses (1: none).
  double temperature() const { return temperature_; }
  /// The kept samples in use, one per column. (P, S)
  const Eigen::MatrixXf& samples() const { return samples_; }
  const Network<float>& network() const { return network_; }

  /// A workspace for blocks of up to block_rows() rows (one per thread).
  Workspace<float> make_workspace() const { return Workspace<float>(layout(), block_rows_); }

  /// The model average and uncertainty of encoded rows x (D, B), 1 <= B <= block_rows().
  /// Fails (kInvalidInput) when x has the wrong shape.
  Status predict_encoded(Workspace<float>& ws, EnsembleAverager& averager,
                         const Eigen::Ref<const Eigen::MatrixXf>& x, Prediction& out) const;

  /// Encodes `rows` of `table` with the stored preprocessing (errors name file, line and
  /// column: see transform_rows) and predicts them. REQUIRES: rows.size() <= block_rows().
  Status predict_rows(Workspace<float>& ws, EnsembleAverager& averager, const Table& table,
                      std::span<const std::int64_t> rows, Prediction& out) const;

 private:
  Predictor(Preprocessing preprocessing, ParamLayout layout, Eigen::MatrixXf samples,
            Index block_rows, double temperature);

  Preprocessing preprocessing_;
  Network<float> network_;
  Eigen::MatrixXf samples_;  // (P, S)
  Index block_rows_ = 0;
  double temperature_ = 1.0;
};

// ---------------------------------------------------------------------------------------
// Scoring a kept ensemble on labelled rows: the model average, and every member alone.

/// One member's scores on the rows, as if it were the whole model.
struct MemberScores {
  double accuracy = 0;
  double nll = 0;    // nats
  double brier = 0;  // multi-class
  double ece = 0;    // top-label, equal-width bins (EvaluateOptions::ece_bins)
};

struct EvaluateOptions {
  /// Bins of each member's ECE. Default 15.
  int ece_bins = 15;
  /// Keep every member's (K, n) log-probabilities (for fitting a temperature).
  bool keep_member_log_probs = false;
  /// Member-wise temperature. Empty (default): the predictor's own.
  std::optional<double> temperature;
};

struct EnsembleEvaluation {
  /// The model average: log_mean (K, n), H, E H and MI per row, of the tempered members.
  UncertaintySplit split;
  std::vector<MemberScores> members;              // (S)
  std::vector<Eigen::MatrixXd> member_log_probs;  // (S) of (K, n), when kept
  double temperature = 1;                         // the temperature used
};

/// Runs every kept sample over encoded rows x (D, n) with labels (n): the model average
/// with its uncertainty split (as predict computes it), and each member's accuracy, NLL,
/// Brier score and ECE on its own, so that the gain of averaging shows. Blocks of
/// block_rows() rows run in parallel; results do not depend on the thread count.
/// kInvalidInput when x has the wrong width, n == 0, a label is out of range or the
/// temperature is not positive.
Result<EnsembleEvaluation> evaluate_ensemble(const Predictor& predictor,
                                             const Eigen::Ref<const Eigen::MatrixXf>& x,
                                             std::span<const std::int32_t> labels,
                                             const EvaluateOptions& options);

// ---------------------------------------------------------------------------------------
// From a CSV file to a predictions CSV.

/// Which uncertainty decides referral.
enum class FlagBy { kEntropy, kMutualInformation };
/// "entropy" / "mi".
std::string_view flag_by_name(FlagBy flag_by);

struct PredictCsvOptions {
  /// How the input is read. Use the run's stored delimiter and missing-value tokens.
  /// Id, target and categorical columns are added to its text columns.
  ReadOptions read;
  /// Columns passed through first, as written. Empty (default): the run's id columns
  /// that the input has. A name the input lacks is an error.
  std::vector<std::string> id_columns;
  /// With a value, a `refer` column holds 1 where the chosen uncertainty exceeds it.
  /// Default none.
  std::optional<double> flag_above;
  /// The uncertainty compared with flag_above. Default: predictive entropy.
  FlagBy flag_by = FlagBy::kEntropy;
  /// Input columns passed through after the id columns, as written (--keep). A name the
  /// input lacks is an error. Default none.
  std::vector<std::string> keep_columns;
  /// Two classes only: the class whose probability the threshold and the interval follow
  /// (resolve_positive_class). Default 1, the class that sorts second.
  int positive_class = 1;
  /// Two classes only: `predicted` is the positive class where its probability is at
  /// least this, else the other class. Empty (default): the most probable class.
  std::optional<double> threshold;
  /// Level of the per-row credible interval of the positive class's probability (each
  /// class's, for more than two) across kept samples; 0 writes none. Default 0.90.
  double interval_level = 0.90;
  /// A row is marked `outside` when its farthest_z exceeds this or it holds an unseen
  /// category. Default 10 (docs/predictions-csv.md: measured on shipped tables).
  double outside_z = 10;
  /// Bytes of CSV read and parsed at a time (whole records). Default 4 MiB: a parsed
  /// piece takes about ten times its bytes (numbers, interned text, line starts), so
  /// predict's peak stays near 75 MB whatever the file's length.
  std::int64_t chunk_bytes = std::int64_t{4} << 20;
};

/// What predict_csv did.
struct PredictCsvSummary {
  std::int64_t rows = 0;                     // rows predicted
  Index samples = 0;                         // kept samples averaged
  std::int64_t flagged = 0;                  // rows with refer = 1
  std::int64_t clamped = 0;                  // rows whose MI was clamped to 0 (rounding)
  std::int64_t outside = 0;                  // rows marked outside the training range
  bool row_numbers = false;                  // a `row` column was written (no id column)
  std::vector<std::string> id_columns;       // passed through
  bool target_passed = false;                // the target column was passed through
  std::vector<std::string> ignored_columns;  // input columns the model does not use
  std::vector<UnseenCategories> unseen;      // per column, summed over the file (logged once)
};

/// Predicts every row of `input_path` and writes `output_path`: the id columns, the
/// target if present, `p_<class>` per class, `predicted` (class name), `confidence`,
/// `entropy`, `expected_entropy`, `mutual_information` and, with flag_above, `refer`.
/// Rows are processed in blocks of at most predictor.block_rows() (each streamed piece cut
/// into an even number of equal blocks), in parallel, and written in
/// input order to a temporary file renamed over `output_path` at the end, so a failure
/// leaves no output. Returns kInvalidInput (naming file, line, column) for bad input
/// and kIoError when the output cannot be written. The output is byte-identical for
/// any thread count.
Result<PredictCsvSummary> predict_csv(const Predictor& predictor, const std::string& input_path,
                                      const std::string& output_path,
                                      const PredictCsvOptions& options);

}  // namespace credence
