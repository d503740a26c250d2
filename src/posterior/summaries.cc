// SampleSummarizer: probe predictions, layer norms and fixed random projections per sample.
#include "credence/summaries.h"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <string>
#include <utility>

#include "util/rng.h"

namespace credence {
namespace {

inline constexpr int kMaxProjections = 1024;

// u_j ~ N(0, I/P) exactly as documented in summaries.h, so numpy can rebuild them.
Eigen::MatrixXf draw_directions(Index parameters, int count, std::uint64_t seed) {
  Eigen::MatrixXf directions(parameters, count);  // (P, J)
  std::uint64_t state = seed;
  const double scale = 1.0 / std::sqrt(static_cast<double>(parameters));
  for (int j = 0; j < count; ++j) {
    for (Index i = 0; i < parameters; ++i) {
      const std::uint64_t a = splitmix64(state);
      const std::uint64_t b = splitmix64(state);
      const double u1 = static_cast<double>((a >> 11) + 1) * 0x1p-53;  // (0, 1]
      const double u2 = static_cast<double>(b >> 11) * 0x1p-53;        // [0, 1)
      const double z = std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
      directions(i, j) = static_cast<float>(z * scale);
    }
  }
  return directions;
}

}  // namespace

Result<SampleSummarizer> SampleSummarizer::create(const ParamLayout& layout, ProbeSet probe,
                                                  int projections, std::uint64_t seed) {
  if (probe.x.rows() != layout.input_width ||
      probe.x.cols() != static_cast<Index>(probe.labels.size())) {
    return Status::invalid_input(
        "the probe rows are " + std::to_string(probe.x.rows()) + " x " +
        std::to_string(probe.x.cols()) + " with " + std::to_string(probe.labels.size()) +
        " labels; the network needs " + std::to_string(layout.input_width) +
        " inputs per row and one label per row");
  }
  for (std::size_t r = 0; r < probe.labels.size(); ++r) {
    if (probe.labels[r] < 0 || probe.labels[r] >= layout.num_classes) {
      return Status::invalid_input("probe row " + std::to_string(r) + " has label " +
                                   std::to_string(probe.labels[r]) + "; expected 0.." +
                                   std::to_string(layout.num_classes - 1));
    }
  }
  if (projections < 0 || projections > kMaxProjections) {
    return Status::invalid_input("the number of random projections is " +
                                 std::to_string(projections) + "; use 0 to " +
                                 std::to_string(kMaxProjections) + " (4 to 8 is typical)");
  }
  Eigen::MatrixXf directions = draw_directions(layout.num_params, projections, seed);
  return SampleSummarizer(layout, std::move(probe), std::move(directions));
}

SampleSummarizer::SampleSummarizer(const ParamLayout& layout, ProbeSet probe,
                                   Eigen::MatrixXf directions)
    : network_(layout),
      probe_(std::move(probe)),
      workspace_(layout, std::max<Index>(1, probe_.x.cols())),
      directions_(std::move(directions)) {}

SampleSummary SampleSummarizer::make_summary() const {
  SampleSummary out;
  out.probe_prob.setZero(probe_rows());
  out.projections.setZero(projection_count());
  out.layer_sq_norms.setZero(layer_count());
  return out;
}

Status SampleSummarizer::summarize(ConstVecRef<float> theta, SampleSummary& out) {
  const ParamLayout& layout = network_.layout();
  if (theta.size() != layout.num_params) {
    return Status::invalid_input("summarizing a sample of " + std::to_string(theta.size()) +
                                 " parameters; the network has " +
                                 std::to_string(layout.num_params));
  }
  // Same sizes as before: Eigen's resize is then a no-op, so nothing is allocated.
  out.probe_prob.resize(probe_rows());
  out.projections.resize(projection_count());
  out.layer_sq_norms.resize(layer_count());

  // Probe predictions: one forward pass over all R rows, log-probabilities (K, R).
  out.probe_log_lik = 0;
  if (probe_rows() > 0) {
    CREDENCE_RETURN_IF_ERROR(network_.forward(workspace_, theta, probe_.x));
    const ConstMatRef<float> log_probs = workspace_.log_probs();
    for (Index r = 0; r < probe_rows(); ++r) {
      const double lp = log_probs(probe_.labels[static_cast<std::size_t>(r)], r);
      out.probe_log_lik += lp;
      out.probe_prob[r] = static_cast<float>(std::exp(lp));
    }
  }
  // Symmetry-invariant layer norms, weights and bias together, in double.
  for (std::size_t l = 0; l < layout.layers.size(); ++l) {
    const LayerLayout& layer = layout.layers[l];
    const double w =
        theta.segment(layer.weight_offset, layer.out * layer.in).cast<double>().squaredNorm();
    const double b = theta.segment(layer.bias_offset, layer.out).cast<double>().squaredNorm();
    out.layer_sq_norms[static_cast<Index>(l)] = static_cast<float>(w + b);
  }
  for (Index j = 0; j < directions_.cols(); ++j) {
    out.projections[j] =
        static_cast<float>(directions_.col(j).cast<double>().dot(theta.cast<double>()));
  }
  return Status::ok_status();
}

}  // namespace credence
