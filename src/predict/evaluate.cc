// evaluate_ensemble: the model average and each member's own scores on labelled rows.
#include <fmt/format.h>
#include <omp.h>

#include <cmath>
#include <limits>

#include "credence/predict.h"

namespace credence {
namespace {

// Additive per-member sums over rows: everything MemberScores needs, so blocks can be
// scored independently and summed in block order.
struct MemberSums {
  double nll = 0;
  double brier = 0;
  double correct = 0;
  Eigen::ArrayXd bin_count;       // (M)
  Eigen::ArrayXd bin_confidence;  // (M) sum of top-label confidence
  Eigen::ArrayXd bin_correct;     // (M)

  explicit MemberSums(int bins)
      : bin_count(Eigen::ArrayXd::Zero(bins)),
        bin_confidence(Eigen::ArrayXd::Zero(bins)),
        bin_correct(Eigen::ArrayXd::Zero(bins)) {}

  void add(const MemberSums& other) {
    nll += other.nll;
    brier += other.brier;
    correct += other.correct;
    bin_count += other.bin_count;
    bin_confidence += other.bin_confidence;
    bin_correct += other.bin_correct;
  }
};

// log softmax(log_probs / tau) into out (K, B), column by column.
void temper_into(const Eigen::Ref<const Eigen::MatrixXf>& log_probs, double temperature,
                 Eigen::MatrixXd& out) {
  out = log_probs.cast<double>();
  if (temperature == 1.0) return;
  out /= temperature;
  for (Index b = 0; b < out.cols(); ++b) {
    const double top = out.col(b).maxCoeff();
    out.col(b).array() -= top + std::log((out.col(b).array() - top).exp().sum());
  }
}

// Scores one member's block: NLL from the log-probabilities, Brier, top label (ties go to
// the lowest index, as predicted_classes) and its confidence bin.
void score_block(const Eigen::MatrixXd& log_p, std::span<const std::int32_t> labels, int bins,
                 MemberSums& sums) {
  for (Index b = 0; b < log_p.cols(); ++b) {
    const std::int32_t y = labels[static_cast<std::size_t>(b)];
    Index top = 0;
    double brier = 0;
    for (Index k = 0; k < log_p.rows(); ++k) {
      if (log_p(k, b) > log_p(top, b)) top = k;
      const double p = std::exp(log_p(k, b));
      const double diff = p - (k == y ? 1.0 : 0.0);
      brier += diff * diff;
    }
    const double confidence = std::exp(log_p(top, b));
    const bool correct = top == y;
    sums.nll -= log_p(y, b);
    sums.brier += brier;
    sums.correct += correct ? 1 : 0;
    const int bin = equal_width_bin(std::min(1.0, confidence), bins);
    sums.bin_count[bin] += 1;
    sums.bin_confidence[bin] += confidence;
    sums.bin_correct[bin] += correct ? 1 : 0;
  }
}

}  // namespace

Result<EnsembleEvaluation> evaluate_ensemble(const Predictor& predictor,
                                             const Eigen::Ref<const Eigen::MatrixXf>& x,
                                             std::span<const std::int32_t> labels,
                                             const EvaluateOptions& options) {
  const Index n = x.cols();
  const Index classes = predictor.num_classes();
  const Index members = predictor.num_samples();
  const double temperature = options.temperature.value_or(predictor.temperature());
  if (x.rows() != predictor.layout().input_width || n == 0 ||
      static_cast<Index>(labels.size()) != n) {
    return Status::invalid_input(fmt::format(
        "scoring ({}, {}) rows with {} labels; expected {} encoded features per row and one "
        "label per row",
        x.rows(), n, labels.size(), predictor.layout().input_width));
  }
  for (std::size_t i = 0; i < labels.size(); ++i) {
    if (labels[i] < 0 || labels[i] >= classes) {
      return Status::invalid_input(
          fmt::format("label {} of row {} is not a class index 0..{}", labels[i], i, classes - 1));
    }
  }
  if (!(temperature > 0) || !std::isfinite(temperature)) {
    return Status::invalid_input(fmt::format("temperature {}: give a positive number", temperature));
  }
  if (options.ece_bins < 1) return Status::invalid_input("ECE needs at least one bin");

  EnsembleEvaluation out;
  out.temperature = temperature;
  out.split.log_mean.resize(classes, n);
  out.split.total.resize(n);
  out.split.expected.resize(n);
  out.split.mutual_info.resize(n);
  if (options.keep_member_log_probs) {
    out.member_log_probs.assign(static_cast<std::size_t>(members), Eigen::MatrixXd(classes, n));
  }
  const Index block = predictor.block_rows();
  const Index blocks = (n + block - 1) / block;
  // Per block and member sums, added in block order afterwards: the same result for any
  // thread count.
  std::vector<std::vector<MemberSums>> block_sums(
      static_cast<std::size_t>(blocks),
      std::vector<MemberSums>(static_cast<std::size_t>(members), MemberSums(options.ece_bins)));
  std::vector<Status> block_status(static_cast<std::size_t>(blocks));
  std::vector<std::int64_t> block_clamped(static_cast<std::size_t>(blocks), 0);
  std::vector<double> block_largest_clamp(static_cast<std::size_t>(blocks), 0.0);

#pragma omp parallel
  {
    Workspace<float> ws = predictor.make_workspace();
    UncertaintyAccumulator accumulator;
    UncertaintySplit split;
    Eigen::MatrixXd tempered;
#pragma omp for schedule(dynamic, 1)
    for (Index bi = 0; bi < blocks; ++bi) {
      const Index start = bi * block;
      const Index rows = std::min(block, n - start);
      const auto block_labels = labels.subspan(static_cast<std::size_t>(start),
                                               static_cast<std::size_t>(rows));
      accumulator.reset(classes, rows);
      Status status;
      for (Index s = 0; s < members && status.ok(); ++s) {
        status = predictor.network().forward(ws, predictor.samples().col(s),
                                             x.middleCols(start, rows));
        if (!status.ok()) break;
        temper_into(ws.log_probs(), temperature, tempered);
        accumulator.add_member(tempered);
        score_block(tempered, block_labels, options.ece_bins,
                    block_sums[static_cast<std::size_t>(bi)][static_cast<std::size_t>(s)]);
        if (options.keep_member_log_probs) {
          out.member_log_probs[static_cast<std::size_t>(s)].middleCols(start, rows) = tempered;
        }
      }
      block_status[static_cast<std::size_t>(bi)] = status;
      if (!status.ok()) continue;
      accumulator.finish(split);
      out.split.log_mean.middleCols(start, rows) = split.log_mean;
      out.split.total.segment(start, rows) = split.total;
      out.split.expected.segment(start, rows) = split.expected;
      out.split.mutual_info.segment(start, rows) = split.mutual_info;
      block_clamped[static_cast<std::size_t>(bi)] = split.clamped_rows;
      block_largest_clamp[static_cast<std::size_t>(bi)] = split.largest_clamp;
    }
  }
  for (const Status& status : block_status) CREDENCE_RETURN_IF_ERROR(status);

  const double rows = static_cast<double>(n);
  out.members.resize(static_cast<std::size_t>(members));
  for (Index s = 0; s < members; ++s) {
    MemberSums total(options.ece_bins);
    for (const auto& sums : block_sums) total.add(sums[static_cast<std::size_t>(s)]);
    MemberScores& scores = out.members[static_cast<std::size_t>(s)];
    scores.accuracy = total.correct / rows;
    scores.nll = total.nll / rows;
    scores.brier = total.brier / rows;
    scores.ece = (total.bin_correct - total.bin_confidence).abs().sum() / rows;
  }
  for (std::size_t bi = 0; bi < block_clamped.size(); ++bi) {
    out.split.clamped_rows += block_clamped[bi];
    out.split.largest_clamp = std::min(out.split.largest_clamp, block_largest_clamp[bi]);
  }
  return out;
}

}  // namespace credence
