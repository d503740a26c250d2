// Predictor: a run's preprocessing, network and kept samples, ready to predict rows.
#include <fmt/format.h>

#include <algorithm>
#include <cassert>
#include <numeric>
#include <utility>
#include <cmath>

#include "credence/ensemble.h"
#include "credence/predict.h"
#include "util/log.h"

namespace credence {
namespace {

constexpr const char* kNotFinite =
    "the ensemble's output for this row is not finite (a value far outside the training "
    "range overflows the network); check the row's values";

// The first row (column) of a finished prediction that is not finite, or -1.
Index non_finite_row(const Prediction& out) {
  for (Index b = 0; b < out.rows(); ++b) {
    if (!out.probabilities.col(b).allFinite() || !std::isfinite(out.entropy(b)) ||
        !std::isfinite(out.mutual_information(b))) {
      return b;
    }
  }
  return -1;
}

}  // namespace

Predictor::Predictor(Preprocessing preprocessing, ParamLayout layout, Eigen::MatrixXf samples,
                     Index block_rows, double temperature)
    : preprocessing_(std::move(preprocessing)),
      network_(std::move(layout)),
      samples_(std::move(samples)),
      block_rows_(block_rows),
      temperature_(temperature) {}

Result<Predictor> Predictor::from_parts(Preprocessing preprocessing, const std::string& net_text,
                                        Eigen::MatrixXf samples, const PredictorOptions& options) {
  if (options.block_rows < 1) {
    return Status::invalid_input(
        fmt::format("block of {} rows asked for; use at least 1", options.block_rows));
  }
  const double temperature = options.temperature.value_or(1.0);
  if (!(temperature > 0) || !std::isfinite(temperature)) {
    return Status::invalid_input(
        fmt::format("temperature {} asked for; give a positive finite number", temperature));
  }
  if (samples.cols() == 0) {
    return Status::invalid_input(
        "the run holds no kept sample yet; train longer (or resume it) before predicting");
  }
  // RunReader refuses a run holding one; parts from elsewhere are checked here, because
  // one non-finite member makes every averaged probability NaN.
  if (!samples.allFinite()) {
    return Status::invalid_input(
        "a kept sample holds a non-finite value (NaN or infinity); no prediction is made "
        "from it");
  }
  Result<NetSpec> spec = parse_net_text(net_text, "stored net text");
  if (!spec.ok()) {
    return Status::corrupt("reading the stored network: " + spec.status().message());
  }
  Result<ParamLayout> layout = resolve_layout(*spec, static_cast<Index>(preprocessing.input_width),
                                              static_cast<Index>(preprocessing.class_names.size()));
  if (!layout.ok()) {
    return Status::corrupt("resolving the stored network: " + layout.status().message());
  }
  if (layout->num_params != samples.rows()) {
    return Status::corrupt(fmt::format(
        "the stored samples have {} parameters but the stored network needs {}; the run "
        "file is damaged",
        samples.rows(), layout->num_params));
  }
  if (options.samples > samples.cols()) {
    log().warn("{} samples asked for but the run holds {}; using all of them", options.samples,
               samples.cols());
  }
  const std::vector<Index> chosen = spread_samples(samples.cols(), options.samples);
  if (static_cast<Index>(chosen.size()) != samples.cols()) {
    Eigen::MatrixXf kept(samples.rows(), static_cast<Index>(chosen.size()));  // (P, S')
    for (std::size_t i = 0; i < chosen.size(); ++i) {
      kept.col(static_cast<Index>(i)) = samples.col(chosen[i]);
    }
    samples = std::move(kept);
  }
  return Predictor(std::move(preprocessing), std::move(*layout), std::move(samples),
                   static_cast<Index>(options.block_rows), temperature);
}

Result<Predictor> Predictor::create(const RunReader& run, const PredictorOptions& options) {
  Result<Eigen::MatrixXf> samples = run.samples();
  if (!samples.ok()) return samples.status();
  // Rows are stored in commit order, which depends on thread timing; sort them by
  // (chain, kept number) so that --samples N picks the same members every time.
  Result<std::vector<std::int32_t>> chains = run.sample_chains();
  if (!chains.ok()) return chains.status();
  Result<std::vector<std::int64_t>> indices = run.sample_indices();
  if (!indices.ok()) return indices.status();
  std::vector<Index> order(static_cast<std::size_t>(samples->cols()));
  std::iota(order.begin(), order.end(), Index{0});
  std::stable_sort(order.begin(), order.end(), [&](Index a, Index b) {
    const auto ua = static_cast<std::size_t>(a), ub = static_cast<std::size_t>(b);
    return std::pair((*chains)[ua], (*indices)[ua]) < std::pair((*chains)[ub], (*indices)[ub]);
  });
  Eigen::MatrixXf sorted(samples->rows(), samples->cols());  // (P, S)
  for (std::size_t i = 0; i < order.size(); ++i) {
    sorted.col(static_cast<Index>(i)) = samples->col(order[i]);
  }
  *samples = std::move(sorted);
  const RunHeader& header = run.header();
  PredictorOptions chosen = options;
  if (!chosen.temperature) {
    Result<std::optional<StoredTemperature>> stored = run.stored_temperature();
    if (!stored.ok()) return stored.status();
    if (*stored) chosen.temperature = (*stored)->temperature;
  }
  return from_parts(header.preprocessing, header.net_text, std::move(*samples), chosen);
}

Status Predictor::predict_encoded(Workspace<float>& ws, EnsembleAverager& averager,
                                  const Eigen::Ref<const Eigen::MatrixXf>& x,
                                  Prediction& out) const {
  if (x.rows() != layout().input_width || x.cols() < 1 || x.cols() > block_rows_) {
    return Status::invalid_input(fmt::format("predicting a ({}, {}) block; expected ({}, 1..{})",
                                             x.rows(), x.cols(), layout().input_width,
                                             block_rows_));
  }
  averager.reset(num_classes(), x.cols(), temperature_);
  for (Index s = 0; s < samples_.cols(); ++s) {
    CREDENCE_RETURN_IF_ERROR(network_.forward(ws, samples_.col(s), x));
    averager.add_member(ws.log_probs());  // (K, B)
  }
  averager.finish(out);
  input_distance(preprocessing_, x, out.farthest_z, out.rms_z, out.unseen_inputs);
  // "No NaN output ever": finite weights can still overflow float32 on an input far
  // outside the training range. Refuse the block rather than print NaN.
  if (const Index b = non_finite_row(out); b >= 0) {
    return Status::invalid_input(fmt::format("row {} of the block: {}", b + 1, kNotFinite));
  }
  return Status::ok_status();
}

Status Predictor::predict_rows(Workspace<float>& ws, EnsembleAverager& averager, const Table& table,
                               std::span<const std::int64_t> rows, Prediction& out) const {
  assert(static_cast<Index>(rows.size()) <= block_rows_);
  out.unseen.clear();
  Result<Eigen::MatrixXf> x = transform_rows(preprocessing_, table, rows, &out.unseen);  // (D, B)
  if (!x.ok()) return x.status();
  Status status = predict_encoded(ws, averager, *x, out);
  // Only a refusal of the finished block leaves `out` holding this block's rows.
  if (const Index b = status.ok() ? -1 : non_finite_row(out);
      b >= 0 && out.rows() == static_cast<Index>(rows.size())) {
    return Status::invalid_input(
        table.cell_location(rows[static_cast<std::size_t>(b)], 0) + ": " + kNotFinite);
  }
  return status;
}

}  // namespace credence
