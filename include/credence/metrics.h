// metrics: scores, calibration, uncertainty split, selective prediction, temperature scaling.
//
// Every function here is a pure computation on plain inputs: class probabilities (or their
// logarithms) as a (K, n) double matrix, one row of data per column as everywhere in
// credence, and n labels in 0..K-1. Nothing is stored between calls, so every call is safe
// from several threads at once. The formulas and their test values are docs/methods.md section 9;
// each function's source is named above its definition in src/metrics/.
//
// Most functions assume valid input and say so in REQUIRES: lines (asserts in tests).
// Input that comes from a user (labels read from a CSV, a probability file) goes through
// check_probabilities() first, or through assess_predictions(), which checks for you:
//
//   Result<Assessment> a = assess_predictions(log_pbar, labels, AssessSettings{});
//   if (!a.ok()) return a.status();
//   double ece15 = a->width_bins.ece;
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <span>
#include <string_view>
#include <vector>

#include "credence/status.h"

namespace credence {

/// A read-only view of a (K, n) double matrix: probabilities, log-probabilities or logits.
using ProbsRef = Eigen::Ref<const Eigen::MatrixXd>;
/// n class labels, each in 0..K-1.
using LabelSpan = std::span<const std::int32_t>;

// ---------------------------------------------------------------------------------------
// Input checks

/// Ok when `probs` is (K, n) with K >= 2, n >= 1, n == labels.size(), every entry in
/// [0, 1] (NaN is rejected), every column summing to 1 within 1e-6, and every label in
/// [0, K). Otherwise kInvalidInput naming the first bad row (0-based) and what to do.
Status check_probabilities(ProbsRef probs, LabelSpan labels);

/// As check_probabilities for log-probabilities: entries <= 1e-12 (-inf allowed for a
/// probability of exactly 0), columns whose exponentials sum to 1 within 1e-6.
Status check_log_probabilities(ProbsRef log_probs, LabelSpan labels);

// ---------------------------------------------------------------------------------------
// Uncertainty of an ensemble (docs/methods.md 9.1)

/// Per-row uncertainty split of a model average. All vectors are (n), in nats.
struct UncertaintySplit {
  Eigen::MatrixXd log_mean;       // (K, n) log pbar, the stable log of the model average
  Eigen::VectorXd total;          // (n) predictive entropy H[pbar]
  Eigen::VectorXd expected;       // (n) expected entropy E_s H[p_s] (aleatoric)
  Eigen::VectorXd mutual_info;    // (n) MI = H[pbar] - E H, clamped at 0 (epistemic)
  std::int64_t clamped_rows = 0;  // rows whose MI came out negative by rounding and was set to 0
  double largest_clamp = 0;       // the most negative raw MI seen (0 when none)
};

/// Entropy -sum_k p_k log p_k of each column from its log-probabilities, with 0 log 0 = 0.
/// REQUIRES: log_probs is (K, n).
Eigen::VectorXd entropy_from_log(ProbsRef log_probs);

/// Accumulates an ensemble member by member for one block of n rows without storing the
/// S members: each add_member() folds log p_s into a running logsumexp (a running maximum
/// plus a sum scaled by it) and its entropy into a running weighted sum, so memory is
/// O(K n) whatever S is, and each entry costs two vectorised exponentials. The predictor calls it
/// once per kept sample and per block of rows:
///
///   UncertaintyAccumulator acc(K, n);
///   for (s : samples) acc.add_member(log_softmax_of_member_s);   // (K, n) each
///   UncertaintySplit split = acc.finish();
///
/// Weights need not sum to 1: finish() divides by their total (equal weights: pass none).
class UncertaintyAccumulator {
 public:
  UncertaintyAccumulator() = default;
  /// REQUIRES: classes >= 1, rows >= 0.
  UncertaintyAccumulator(Eigen::Index classes, Eigen::Index rows);

  /// Starts over for (classes, rows); keeps the buffers when the shape is unchanged,
  /// so blocks of equal size allocate nothing. REQUIRES: classes >= 1, rows >= 0.
  void reset(Eigen::Index classes, Eigen::Index rows);

  /// Adds one member's log-probabilities with weight w > 0 (float members, as the
  /// network computes them, are widened to double here).
  /// REQUIRES: log_probs is (classes, rows); weight > 0 and finite.
  void add_member(ProbsRef log_probs, double weight = 1.0);
  void add_member(const Eigen::Ref<const Eigen::MatrixXf>& log_probs, double weight = 1.0);

  /// Members added so far.
  std::int64_t members() const { return members_; }

  /// The model average and its entropy split. REQUIRES: members() >= 1.
  UncertaintySplit finish() const;
  /// The same into `out`, reusing its buffers when they have the right size.
  void finish(UncertaintySplit& out) const;

 private:
  template <typename Derived>
  void add(const Eigen::MatrixBase<Derived>& log_probs, double weight);

  Eigen::ArrayXXd running_max_;  // (K, n) m = max_s (log w_s + log p_s)
  Eigen::ArrayXXd scaled_sum_;   // (K, n) sum_s exp(log w_s + log p_s - m)
  Eigen::VectorXd entropy_sum_;  // (n) sum_s w_s H[p_s]
  double weight_sum_ = 0;
  std::int64_t members_ = 0;
};

/// The same split for members already in memory, each (K, n) log-probabilities, equal
/// weights. REQUIRES: at least one member; all of the same shape.
UncertaintySplit split_uncertainty(std::span<const Eigen::MatrixXd> member_log_probs);

// ---------------------------------------------------------------------------------------
// Scores on labelled rows (docs/methods.md 9.2). REQUIRES for all: probs (K, n), n ==
// labels.size() >= 1, labels in [0, K).

/// argmax_k of each column; ties go to the lowest class index. (n)
std::vector<std::int32_t> predicted_classes(ProbsRef probs);
/// Top-label confidence max_k p_ik of each column. (n)
Eigen::VectorXd top_confidence(ProbsRef probs);
/// Fraction of rows whose predicted class (ties: lowest index) equals the label.
double accuracy_score(ProbsRef probs, LabelSpan labels);
/// Mean negative log-likelihood in nats, -mean_i log p_i,y_i, read from log-probabilities
/// (so a tiny probability costs no precision). +inf when a label has probability 0.
double negative_log_likelihood(ProbsRef log_probs, LabelSpan labels);
/// Multi-class Brier score mean_i sum_k (p_ik - [y_i == k])^2, in [0, 2].
double brier_score(ProbsRef probs, LabelSpan labels);
/// Binary Brier score mean_i (q_i - [y_i == 1])^2 of the positive class (index 1), in
/// [0, 1]; equals half the multi-class value. REQUIRES: K == 2.
double binary_brier_score(ProbsRef probs, LabelSpan labels);
/// The same from P(positive) q and 0/1 labels (scikit-learn's brier_score_loss with 1-D
/// input). REQUIRES: q.size() == labels.size() >= 1, labels in {0, 1}.
double binary_brier_score(std::span<const double> q, LabelSpan labels);

// ---------------------------------------------------------------------------------------
// Binning and calibration (docs/methods.md 9.3)

/// How rows are grouped into M bins by confidence.
enum class Binning {
  kEqualWidth,  // M intervals of width 1/M, closed on the right, NumPy-identical edges
  kEqualMass,   // stable sort by confidence, bin b holds positions floor(bn/M)..floor((b+1)n/M)-1
};

/// The M + 1 equal-width edges: edge_i = i * (1.0 / M), edge_M = 1.0 (NumPy's linspace).
/// REQUIRES: bins >= 1.
std::vector<double> equal_width_edges(int bins);
/// Bin 0..M-1 of p in [0, 1]: the number of inner edges strictly below p (NumPy's
/// searchsorted(edges[1:-1], p, 'left')). REQUIRES: bins >= 1, 0 <= p <= 1.
int equal_width_bin(double p, int bins);
/// NumPy's quantile(sorted, f) with its default 'linear' method on values already sorted
/// ascending: h = (n - 1) f, then sorted[floor h] + (h - floor h) (sorted[floor h + 1] -
/// sorted[floor h]), interpolated from the nearer end as NumPy 1.24 does.
/// REQUIRES: sorted non-empty and ascending, 0 <= f <= 1.
double sorted_quantile(std::span<const double> sorted, double f);
/// NumPy's percentile(values, q) with its default linear interpolation, q in [0, 100].
/// REQUIRES: values non-empty. Does not modify `values` (sorts a copy).
double percentile_linear(std::span<const double> values, double q);
/// scikit-learn's quantile edges: percentile(values, linspace(0, 1, M + 1) * 100), M + 1
/// values. REQUIRES: bins >= 1, values non-empty.
std::vector<double> quantile_edges(std::span<const double> values, int bins);

/// One bin of a top-label reliability table. Means are NaN for an empty bin.
struct ReliabilityBin {
  double lo = 0;               // lower end: the edge (equal width) or the smallest confidence
  double hi = 0;               // upper end: the edge (equal width) or the largest confidence
  std::int64_t count = 0;      // n_m, rows in the bin
  double mean_confidence = 0;  // conf_m
  double accuracy = 0;         // acc_m, fraction of those rows predicted correctly
};

/// A top-label reliability table with its ECE and MCE.
struct ReliabilityTable {
  Binning binning = Binning::kEqualWidth;
  int bins = 0;                      // M
  std::vector<ReliabilityBin> rows;  // M bins in order, empty ones included
  double ece = 0;                    // sum_m (n_m / n) |acc_m - conf_m|
  double mce = 0;                    // max over non-empty bins of |acc_m - conf_m|
};

/// Reliability table of top-label confidence against correctness.
/// REQUIRES: confidence in [0, 1], correct.size() == confidence.size() >= 1, bins >= 1.
ReliabilityTable reliability_from_confidence(std::span<const double> confidence,
                                             std::span<const std::uint8_t> correct, int bins,
                                             Binning binning);
/// Reliability table of probs (K, n) against labels (top label, ties: lowest index).
ReliabilityTable top_label_reliability(ProbsRef probs, LabelSpan labels, int bins,
                                       Binning binning = Binning::kEqualWidth);
/// Classwise ECE (1/K) sum_k sum_m (n_mk / n) |freq_mk - conf_mk|, equal-width bins.
double classwise_ece(ProbsRef probs, LabelSpan labels, int bins);

/// Edge rule of the positive-class reliability curve.
enum class CurveEdges {
  kWidth,  // "width": equal-width edges (equal_width_edges)
  kMass,   // "mass": edges at the percentiles of q (quantile_edges), about equal rows per bin
};

/// Observed rate of the positive class against mean P(positive) per non-empty bin, in bin
/// order (the same numbers as scikit-learn's calibration_curve(y, q, n_bins=M) with its
/// uniform and quantile strategies).
struct PositiveClassCurve {
  std::vector<double> edges;            // M + 1 edges used
  std::vector<double> observed;         // per non-empty bin: mean [y == positive]
  std::vector<double> mean_probability; // per non-empty bin: mean q
  std::vector<std::int64_t> counts;     // per non-empty bin: rows
};

/// REQUIRES: q in [0, 1], labels in {0, 1} (1: positive), q.size() == labels.size() >= 1,
/// bins >= 1.
PositiveClassCurve positive_class_curve(std::span<const double> q, LabelSpan labels, int bins,
                                        CurveEdges edges = CurveEdges::kWidth);

// ---------------------------------------------------------------------------------------
// AUROC and selective prediction (docs/methods.md 9.5)

/// Area under the ROC curve by the Mann-Whitney statistic, ties counting one half (equal to
/// scikit-learn's roc_auc_score), from average ranks in O(n log n). Higher scores should
/// mean positive. Empty when every row is positive or every row negative (undefined).
/// REQUIRES: scores.size() == positive.size(); scores not NaN.
std::optional<double> auroc(std::span<const double> scores, std::span<const std::uint8_t> positive);

/// One-vs-rest AUROC of each class and their macro average.
struct OneVsRestAuroc {
  std::vector<double> per_class;  // (K) AUROC of p_k against [y == k]; NaN when undefined
  int classes_scored = 0;         // classes whose AUROC is defined (present and not everywhere)
  std::optional<double> macro;    // mean over the scored classes; empty when none is
};

/// Per-class one-vs-rest AUROC. A class absent from the labels (or the label of every row)
/// has no AUROC: it is NaN in per_class and left out of the macro average, and
/// classes_scored says how many entered it. (scikit-learn instead refuses such input.) For
/// K == 2 the macro value equals the binary AUROC of p_1 (both classes give the same area).
OneVsRestAuroc auroc_one_vs_rest(ProbsRef probs, LabelSpan labels);

/// Accuracy-rejection curve: rows kept in order of increasing uncertainty score (higher is
/// rejected first), ties in row order.
struct RejectionCurve {
  std::vector<double> coverage;  // (n) k / n for k = 1..n
  std::vector<double> accuracy;  // (n) accuracy of the k most certain rows
  double accuracy_at_50 = 0;     // accuracy at the first k with k >= 0.5 n (in double)
  double accuracy_at_80 = 0;     // ... 0.8 n
  double accuracy_at_90 = 0;     // ... 0.9 n
  double accuracy_at_100 = 0;    // all rows
  double aurc = 0;               // area under the risk-coverage curve, mean_k (1 - acc_k)
};

/// REQUIRES: uncertainty.size() == correct.size() >= 1; no NaN scores.
/// For a confidence ranking pass -conf; for entropy or MI pass them as they are.
RejectionCurve accuracy_rejection(std::span<const double> uncertainty,
                                  std::span<const std::uint8_t> correct);

/// [pred_i == y_i] per row (ties: lowest class index). (n)
std::vector<std::uint8_t> correct_predictions(ProbsRef probs, LabelSpan labels);

// ---------------------------------------------------------------------------------------
// Binary decisions and their curves (src/metrics/decisions.cc, curves.cc)
//
// One class is the positive one (the event a risk score is about); a row is called
// positive when its probability q of that class is at least a threshold t: q >= t.

/// P(positive) and the truth [y == positive] per row. (n) each.
struct PositiveScores {
  std::vector<double> q;
  std::vector<std::uint8_t> positive;
};
/// REQUIRES: probs (K, n), labels (n) in [0, K), 0 <= positive_class < K.
PositiveScores positive_scores(ProbsRef probs, LabelSpan labels, int positive_class);

/// Rows by truth and decision at one threshold.
struct ConfusionCounts {
  std::int64_t true_positive = 0;
  std::int64_t false_positive = 0;
  std::int64_t true_negative = 0;
  std::int64_t false_negative = 0;
};

/// The confusion counts at threshold t and the rates read from them. A rate whose
/// denominator is 0 is NaN (it is undefined, not 0).
struct DecisionScores {
  double threshold = 0.5;
  ConfusionCounts counts;
  double sensitivity = 0;  // TP / (TP + FN), also recall or true positive rate
  double specificity = 0;  // TN / (TN + FP)
  double ppv = 0;          // TP / (TP + FP), positive predictive value (precision)
  double npv = 0;          // TN / (TN + FN), negative predictive value
  double f1 = 0;           // 2 TP / (2 TP + FP + FN)
};

/// Decisions q >= threshold against the truth. REQUIRES: q.size() == positive.size().
DecisionScores decide_at(std::span<const double> q, std::span<const std::uint8_t> positive,
                         double threshold);

/// How a decision threshold is chosen.
enum class ThresholdRule {
  kFixed,        // the threshold given
  kCost,         // least total cost cost_fp * FP + cost_fn * FN on the rows given
  kSensitivity,  // the highest threshold whose sensitivity reaches the target
};
/// "fixed" / "cost" / "sensitivity".
std::string_view threshold_rule_name(ThresholdRule rule);

struct ThresholdSettings {
  ThresholdRule rule = ThresholdRule::kFixed;
  double threshold = 0.5;           // kFixed, in (0, 1)
  double cost_fp = 1;               // kCost: cost of one false positive, > 0
  double cost_fn = 1;               // kCost: cost of one false negative, > 0
  double target_sensitivity = 0.9;  // kSensitivity, in (0, 1]
};

/// A chosen threshold and how it did on the rows it was chosen on.
struct ThresholdChoice {
  ThresholdSettings settings;
  double threshold = 0.5;
  DecisionScores on_choice_rows;   // at `threshold`, on the rows it was chosen on
  double mean_cost = 0;            // kCost: (cost_fp FP + cost_fn FN) / n on those rows
};

/// Chooses a threshold on labelled rows (validation rows, never the rows it is then
/// reported on). Candidate cuts lie between neighbouring distinct values of q: a cut that
/// calls the rows with q >= s_j positive sits halfway between s_j and the next lower
/// distinct value (s_j / 2 below the lowest), and above every row at (s_max + 1) / 2, so
/// a new row between two validation values is decided by the nearer neighbour. Ties in
/// cost go to the higher threshold. kFixed needs no rows. kInvalidInput for settings out
/// of range, no rows, or (kSensitivity) no positive row.
Result<ThresholdChoice> choose_threshold(std::span<const double> q,
                                         std::span<const std::uint8_t> positive,
                                         const ThresholdSettings& settings);

/// Precision against recall over every distinct threshold, from the highest threshold
/// down. Point 0 is the convention (recall 0, precision 1, threshold +inf); point j >= 1
/// calls positive the rows with q >= thresholds[j], the j-th largest distinct q. Reversed,
/// these are scikit-learn's precision_recall_curve arrays.
struct PrecisionRecallCurve {
  std::vector<double> thresholds;
  std::vector<double> precision;
  std::vector<double> recall;
  /// Average precision sum_j (recall_j - recall_{j-1}) precision_j, a step-wise area
  /// under the curve with no interpolation (scikit-learn's average_precision_score).
  double average_precision = 0;
};
/// Empty when no row is positive (recall is undefined). REQUIRES: equal sizes, q not NaN.
std::optional<PrecisionRecallCurve> precision_recall_curve(std::span<const double> q,
                                                           std::span<const std::uint8_t> positive);

/// The ROC curve: false and true positive rates from the highest threshold down, starting
/// at (0, 0) with threshold +inf. Points on a straight segment between their neighbours
/// are dropped (they change neither the shape nor the area), as scikit-learn's roc_curve
/// does by default.
struct RocCurve {
  std::vector<double> thresholds;
  std::vector<double> false_positive_rate;
  std::vector<double> true_positive_rate;
  double area = 0;  // trapezoid rule: the AUROC, ties counting one half
};
/// Empty when every row is positive or every row negative. REQUIRES: as above.
std::optional<RocCurve> roc_curve(std::span<const double> q,
                                  std::span<const std::uint8_t> positive,
                                  bool drop_collinear = true);

/// The decisions of one two-class assessment: a threshold chosen on some rows (the
/// validation rows) and reported on others (the scored rows), with the curves.
struct DecisionReport {
  ThresholdChoice choice;
  std::int64_t choice_rows = 0;  // rows the threshold was chosen on; 0 for a fixed one
  DecisionScores at_threshold;   // on the scored rows
  std::vector<DecisionScores> operating_points;  // at 0.1, 0.2, ..., 0.9 on the scored rows
  std::optional<PrecisionRecallCurve> precision_recall;  // on the scored rows
  std::optional<RocCurve> roc;                           // on the scored rows
};
/// Chooses the threshold on `choice` (ignored, and may be null, for a fixed threshold)
/// and scores `scored` at it. Errors: as choose_threshold, and kInvalidInput when a rule
/// needs rows to choose on and `choice` is null.
Result<DecisionReport> report_decisions(const PositiveScores& scored,
                                        const PositiveScores* choice,
                                        const ThresholdSettings& settings);

// ---------------------------------------------------------------------------------------
// Temperature scaling (docs/methods.md 9.4)

/// Result of fitting one temperature tau on held-out rows.
struct TemperatureFit {
  double temperature = 1;  // tau* in [e^-5, e^5]
  double nll_before = 0;   // NLL at tau = 1
  double nll_after = 0;    // NLL at tau*
  int iterations = 0;      // Newton or bisection steps taken
  bool at_bound = false;   // tau* is a bound of [e^-5, e^5] (the optimum may lie beyond)
};

/// Fits tau minimising mean_i -log softmax(z_i / tau)_{y_i}, where z are logits or the log
/// of an average (an ensemble's own default is member by member: fit_ensemble_temperature,
/// used by assess and applied by predict). Fit it on
/// a validation split, never on the test rows. Fails with kInvalidInput when an entry is
/// NaN or +inf, or a label has log-probability -inf (no tau gives it a finite NLL).
/// REQUIRES: z is (K, n), n == labels.size() >= 1, labels in [0, K).
Result<TemperatureFit> fit_temperature(ProbsRef z, LabelSpan labels);

/// log softmax(z / tau) column by column. (K, n). REQUIRES: tau > 0.
Eigen::MatrixXd apply_temperature(ProbsRef z, double temperature);

/// NLL of softmax(z / tau) against labels. REQUIRES: as fit_temperature, tau > 0.
double temperature_nll(ProbsRef z, LabelSpan labels, double temperature);

/// Temperature scaling of an ensemble member by member: every member's log-probabilities
/// (its logits up to a constant per row) are divided by tau and renormalised before the
/// average, pbar_tau = (1/S) sum_s softmax(log p_s / tau). The tempered ensemble is still
/// an average of distributions, so H = E H + MI holds for it as before. With one member
/// this is fit_temperature. Fails with kInvalidInput on NaN or +inf entries, or when a
/// label has probability 0 under every member.
/// REQUIRES: member_log_probs non-empty, each (K, n) of one shape, n == labels.size() >= 1,
/// labels in [0, K).
Result<TemperatureFit> fit_ensemble_temperature(std::span<const Eigen::MatrixXd> member_log_probs,
                                                LabelSpan labels);
/// NLL of the member-wise tempered ensemble average. REQUIRES: as above, tau > 0.
double ensemble_temperature_nll(std::span<const Eigen::MatrixXd> member_log_probs,
                                LabelSpan labels, double temperature);

// ---------------------------------------------------------------------------------------
// Bootstrap intervals

/// How bootstrap intervals are drawn.
struct BootstrapSettings {
  int resamples = 1000;    // B, resamples of n rows with replacement; 0 means none
  std::uint64_t seed = 0;  // the same seed gives the same intervals, any thread count
  double level = 0.95;     // central percentile interval (2.5% to 97.5% by default)
  int ece_bins = 15;       // M for the ECE interval
  Binning ece_binning = Binning::kEqualWidth;
};

/// A two-sided interval.
struct Interval {
  double lo = 0;
  double hi = 0;
};

/// Percentile intervals of NLL, multi-class Brier and top-label ECE.
struct BootstrapIntervals {
  Interval nll;
  Interval brier;
  Interval ece;
  int resamples = 0;
};

/// Resamples rows with replacement B times (resample b draws from its own stream, seeded
/// by seed and b) and takes NumPy-style linear percentiles of each score.
/// REQUIRES: log_probs (K, n) with n == labels.size() >= 1, labels in [0, K),
/// settings.resamples >= 1, 0 < level < 1, ece_bins >= 1.
BootstrapIntervals bootstrap_intervals(ProbsRef log_probs, LabelSpan labels,
                                       const BootstrapSettings& settings);

// ---------------------------------------------------------------------------------------
// Everything at once

/// What assess_predictions computes.
struct AssessSettings {
  int bins = 15;                // M for equal-width and equal-mass ECE/MCE and the tables
  int classwise_bins = 15;      // M for classwise ECE
  int curve_bins = 10;          // M for the binary positive-class curves
  int positive_class = 1;       // K == 2: the class whose probability the curves follow
  BootstrapSettings bootstrap;  // resamples = 0 skips the intervals
};

/// One assessment of averaged probabilities on labelled rows.
struct Assessment {
  std::int64_t rows = 0;  // n
  int classes = 0;        // K
  double accuracy = 0;
  double nll = 0;                                          // nats
  double brier = 0;                                        // multi-class, [0, 2]
  std::optional<double> brier_binary;                      // K == 2 only, [0, 1]
  ReliabilityTable width_bins;                             // equal width, settings.bins
  ReliabilityTable mass_bins;                              // equal mass, settings.bins
  double classwise_ece = 0;                                // settings.classwise_bins
  std::optional<PositiveClassCurve> curve_width;           // K == 2 only, positive class
  std::optional<PositiveClassCurve> curve_mass;            // K == 2 only, positive class
  OneVsRestAuroc class_auroc;                              // p_k against [y == k]
  std::optional<double> misclassification_auroc;           // positive = correct, score = conf
  RejectionCurve rejection_by_confidence;                  // ranks by -conf
  RejectionCurve rejection_by_entropy;                     // ranks by H[pbar]
  std::optional<RejectionCurve> rejection_by_mutual_info;  // when a split was given
  std::optional<BootstrapIntervals> intervals;             // when settings.bootstrap.resamples > 0
};

/// Checks the input (check_log_probabilities) and computes every score above from log pbar
/// (K, n). Pass the ensemble's UncertaintySplit to get the MI ranking too (its log_mean is
/// not reread; only its mutual_info is used, and it must have n rows).
Result<Assessment> assess_predictions(ProbsRef log_probs, LabelSpan labels,
                                      const AssessSettings& settings,
                                      const UncertaintySplit* split = nullptr);

}  // namespace credence
