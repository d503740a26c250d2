// EnsembleAverager: model average, predictive and expected entropy, mutual information.
#include <algorithm>
#include <cassert>
#include <cmath>

#include "credence/predict.h"

namespace credence {

void EnsembleAverager::reset(Index num_classes, Index rows, double temperature) {
  assert(temperature > 0);
  accumulator_.reset(num_classes, rows);
  temperature_ = temperature;
  if (temperature_ != 1.0) tempered_.resize(num_classes, rows);
  kept_.clear();  // keeps its capacity, so equal blocks allocate once
}

namespace {
// tempered = log softmax(log_probs / tau), column by column.
template <typename Derived>
void temper(const Eigen::MatrixBase<Derived>& log_probs, double temperature,
            Eigen::MatrixXd& tempered) {
  tempered = log_probs.template cast<double>() / temperature;
  for (Index b = 0; b < tempered.cols(); ++b) {
    const double top = tempered.col(b).maxCoeff();
    tempered.col(b).array() -= top + std::log((tempered.col(b).array() - top).exp().sum());
  }
}


// Appends a member's probabilities exp(log p), column by column, when intervals are on.
template <typename Derived>
void keep(const Eigen::MatrixBase<Derived>& log_probs, std::vector<double>& kept) {
  for (Index b = 0; b < log_probs.cols(); ++b) {
    for (Index k = 0; k < log_probs.rows(); ++k) {
      kept.push_back(std::exp(static_cast<double>(log_probs(k, b))));
    }
  }
}
}  // namespace

void EnsembleAverager::add_member(const Eigen::Ref<const Eigen::MatrixXf>& log_probs) {
  if (temperature_ == 1.0) {
    accumulator_.add_member(log_probs);
    if (interval_level_ > 0) keep(log_probs, kept_);
    return;
  }
  temper(log_probs, temperature_, tempered_);
  accumulator_.add_member(tempered_);
  if (interval_level_ > 0) keep(tempered_, kept_);
}

void EnsembleAverager::add_member(const Eigen::Ref<const Eigen::MatrixXd>& log_probs) {
  if (temperature_ == 1.0) {
    accumulator_.add_member(log_probs);
    if (interval_level_ > 0) keep(log_probs, kept_);
    return;
  }
  temper(log_probs, temperature_, tempered_);
  accumulator_.add_member(tempered_);
  if (interval_level_ > 0) keep(tempered_, kept_);
}

void EnsembleAverager::finish(Prediction& out) const {
  assert(members() >= 1);
  accumulator_.finish(split_);
  out.probabilities = split_.log_mean.array().exp().matrix();
  out.entropy = split_.total;
  out.expected_entropy = split_.expected;
  out.mutual_information = split_.mutual_info;
  out.clamped = split_.clamped_rows;
  const Index rows = out.probabilities.cols();
  out.confidence.resize(rows);
  out.predicted.resize(static_cast<std::size_t>(rows));
  for (Index b = 0; b < rows; ++b) {
    Index best = 0;
    for (Index k = 1; k < out.probabilities.rows(); ++k) {
      if (out.probabilities(k, b) > out.probabilities(best, b)) best = k;  // ties: lowest index
    }
    out.predicted[static_cast<std::size_t>(b)] = static_cast<std::int32_t>(best);
    out.confidence(b) = out.probabilities(best, b);
  }
  if (interval_level_ <= 0) {
    out.interval_lo.resize(0, 0);
    out.interval_hi.resize(0, 0);
    return;
  }
  const Index classes = out.probabilities.rows();
  const auto entries = static_cast<std::size_t>(classes * rows);
  const std::size_t members_kept = kept_.size() / entries;
  out.interval_lo.resize(classes, rows);
  out.interval_hi.resize(classes, rows);
  column_.resize(members_kept);
  for (std::size_t e = 0; e < entries; ++e) {
    for (std::size_t s = 0; s < members_kept; ++s) column_[s] = kept_[s * entries + e];
    const Interval interval = interval_of_members(column_, interval_level_);
    const auto k = static_cast<Index>(e % static_cast<std::size_t>(classes));
    const auto b = static_cast<Index>(e / static_cast<std::size_t>(classes));
    out.interval_lo(k, b) = interval.lo;
    out.interval_hi(k, b) = interval.hi;
  }
}

namespace {
// Moves the order statistics floor(h) and floor(h) + 1 of `values`, h = (n - 1) f, to
// their sorted positions in O(n): all that sorted_quantile reads for 0 < f < 1, so a row's
// interval costs O(S) instead of a sort.
void place_order_statistics(std::span<double> values, double f) {
  const double h = static_cast<double>(values.size() - 1) * f;
  const auto i = static_cast<std::size_t>(std::floor(h));
  if (i + 1 >= values.size()) {
    std::nth_element(values.begin(), values.end() - 1, values.end());
    return;
  }
  const auto at = values.begin() + static_cast<std::ptrdiff_t>(i);
  std::nth_element(values.begin(), at, values.end());
  std::iter_swap(at + 1, std::min_element(at + 1, values.end()));
}
}  // namespace

Interval interval_of_members(std::span<double> values, double level) {
  assert(!values.empty() && level > 0 && level < 1);
  Interval out;
  place_order_statistics(values, (1 - level) / 2);
  out.lo = sorted_quantile(values, (1 - level) / 2);
  place_order_statistics(values, (1 + level) / 2);
  out.hi = sorted_quantile(values, (1 + level) / 2);
  return out;
}

// Standardised inputs are stored as z already, so the distance is read off the encoded
// rows with no extra run-file field (docs/predictions-csv.md, "Inputs outside the
// training range").
void input_distance(const Preprocessing& preprocessing, const Eigen::Ref<const Eigen::MatrixXf>& x,
                    Eigen::VectorXd& farthest_z, Eigen::VectorXd& rms_z,
                    Eigen::VectorXi& unseen_inputs) {
  farthest_z.setZero(x.cols());
  rms_z.setZero(x.cols());  // the sum of z^2 until the end
  unseen_inputs.setZero(x.cols());
  Index numeric = 0;
  for (const FeatureEncoding& f : preprocessing.features) {
    if (f.width < 1 || f.offset + f.width > x.rows()) continue;  // a shape error is reported elsewhere
    numeric += f.type == ColumnType::kNumeric;
    for (Index b = 0; b < x.cols(); ++b) {
      if (f.type == ColumnType::kNumeric) {
        const double z = static_cast<double>(x(f.offset, b));
        farthest_z(b) = std::max(farthest_z(b), std::abs(z));
        rms_z(b) += z * z;
      } else if (x.block(f.offset, b, f.width, 1).cwiseAbs().maxCoeff() == 0.0f) {
        unseen_inputs(b) += 1;
      }
    }
  }
  if (numeric > 0) rms_z = (rms_z / static_cast<double>(numeric)).cwiseSqrt();
}

std::vector<Index> spread_samples(Index available, Index wanted) {
  if (wanted <= 0 || wanted >= available) wanted = available;
  std::vector<Index> indices(static_cast<std::size_t>(wanted));
  for (Index i = 0; i < wanted; ++i) indices[static_cast<std::size_t>(i)] = i * available / wanted;
  return indices;
}

}  // namespace credence
