// The potential U~ = -log prior + (N/b) * minibatch NLL, its gradient, and the full-data U.
#include <cmath>
#include <string>

#include "credence/posterior.h"

namespace credence {

std::string_view tempering_name(Tempering tempering) {
  return tempering == Tempering::kWholePosterior ? "posterior" : "likelihood";
}

Result<Tempering> parse_tempering(std::string_view name) {
  if (name == "posterior") return Tempering::kWholePosterior;
  if (name == "likelihood") return Tempering::kLikelihoodOnly;
  return Status::invalid_input("unknown tempering '" + std::string(name) +
                               "'; use posterior (temper prior and likelihood) or likelihood");
}

template <typename S>
Potential<S>::Potential(Network<S> network, GaussianPrior prior,
                        const PotentialSettings& settings)
    : network_(std::move(network)),
      prior_(std::move(prior)),
      settings_(settings),
      workspace_(network_.layout(), settings.max_batch_rows),
      log_lik_(VecX<S>::Zero(settings.max_batch_rows)) {}

template <typename S>
Result<Potential<S>> Potential<S>::create(const ParamLayout& layout, const PriorSpec& prior,
                                          const PotentialSettings& settings) {
  if (settings.num_train_rows < 1 || settings.max_batch_rows < 1) {
    return Status::invalid_input("setting up the potential: training rows (" +
                                 std::to_string(settings.num_train_rows) +
                                 ") and the largest batch (" +
                                 std::to_string(settings.max_batch_rows) +
                                 ") must both be at least 1");
  }
  if (!std::isfinite(settings.temperature) || settings.temperature < 0 ||
      (settings.tempering == Tempering::kLikelihoodOnly && settings.temperature == 0)) {
    return Status::invalid_input(
        "setting up the potential: temperature " + std::to_string(settings.temperature) +
        " is not allowed; use T >= 0 (T > 0 with likelihood tempering)");
  }
  if (layout.layers.empty()) {
    return Status::invalid_input("setting up the potential: the layout has no layers");
  }
  Result<GaussianPrior> gaussian = GaussianPrior::create(prior, layout);
  if (!gaussian.ok()) return gaussian.status().with_context("setting up the potential");
  return Potential(Network<S>(layout), std::move(*gaussian), settings);
}

template <typename S>
double Potential<S>::noise_temperature() const {
  return settings_.tempering == Tempering::kWholePosterior ? settings_.temperature : 1.0;
}

template <typename S>
double Potential<S>::likelihood_scale(Index batch_rows) const {
  const double scale =
      static_cast<double>(settings_.num_train_rows) / static_cast<double>(batch_rows);
  return settings_.tempering == Tempering::kLikelihoodOnly ? scale / settings_.temperature
                                                           : scale;
}

template <typename S>
Result<double> Potential<S>::chunk(ConstVecRef<S> theta, ConstMatRef<S> x,
                                   std::span<const std::int32_t> labels, VecRef<S>* grad,
                                   S scale, Index& correct) {
  if (x.cols() != static_cast<Index>(labels.size())) {
    return Status::invalid_input("evaluating the potential: " + std::to_string(x.cols()) +
                                 " data rows but " + std::to_string(labels.size()) + " labels");
  }
  CREDENCE_RETURN_IF_ERROR(network_.forward(workspace_, theta, x));
  Result<double> log_lik = network_.log_likelihood(log_lik_, workspace_, labels);
  if (!log_lik.ok()) return log_lik;
  if (grad != nullptr) network_.backward(*grad, workspace_, theta, x, labels, scale);
  // Accuracy: the first largest logit is the prediction.
  ConstMatRef<S> logits = workspace_.logits();
  for (Index n = 0; n < logits.cols(); ++n) {
    Index predicted = 0;
    logits.col(n).maxCoeff(&predicted);
    if (predicted == labels[static_cast<std::size_t>(n)]) ++correct;
  }
  return log_lik;
}

template <typename S>
Result<double> Potential<S>::evaluate(ConstVecRef<S> theta, ConstMatRef<S> x_batch,
                                      std::span<const std::int32_t> labels, VecRef<S> grad) {
  const Index rows = static_cast<Index>(labels.size());
  if (grad.size() != network_.num_params() || rows < 1) {
    return Status::invalid_input("evaluating the potential: gradient of length " +
                                 std::to_string(grad.size()) + " for " +
                                 std::to_string(network_.num_params()) +
                                 " parameters and a batch of " + std::to_string(rows) + " rows");
  }
  const double scale = likelihood_scale(rows);
  grad.setZero();
  Index correct = 0;
  Result<double> log_lik =
      chunk(theta, x_batch, labels, &grad, static_cast<S>(scale), correct);
  if (!log_lik.ok()) return log_lik;
  prior_.add_gradient<S>(grad, theta);
  last_neg_log_prior_ = prior_.neg_log_density<S>(theta);
  last_rows_ = rows;
  log_lik_rows_ = rows;
  last_mean_nll_ = -*log_lik / static_cast<double>(rows);
  last_accuracy_ = static_cast<double>(correct) / static_cast<double>(rows);
  return last_neg_log_prior_ - scale * *log_lik;
}

template <typename S>
Result<double> Potential<S>::full(ConstVecRef<S> theta, ConstMatRef<S> x,
                                  std::span<const std::int32_t> labels, VecRef<S>* grad) {
  const Index rows = static_cast<Index>(labels.size());
  if (rows != settings_.num_train_rows || x.cols() != rows) {
    return Status::invalid_input("evaluating the full-data potential: " +
                                 std::to_string(x.cols()) + " data rows and " +
                                 std::to_string(rows) + " labels for N = " +
                                 std::to_string(settings_.num_train_rows) + " training rows");
  }
  if (grad != nullptr) {
    if (grad->size() != network_.num_params()) {
      return Status::invalid_input("evaluating the full-data potential: gradient of length " +
                                   std::to_string(grad->size()) + " for " +
                                   std::to_string(network_.num_params()) + " parameters");
    }
    grad->setZero();
  }
  // Each row counts once: scale N/N = 1 (over T with likelihood tempering).
  const double scale = likelihood_scale(rows);
  double log_lik = 0;
  Index correct = 0;
  const Index step = workspace_.max_batch();
  for (Index start = 0; start < rows; start += step) {
    const Index count = std::min(step, rows - start);
    Result<double> part = chunk(theta, x.middleCols(start, count),
                                labels.subspan(static_cast<std::size_t>(start),
                                               static_cast<std::size_t>(count)),
                                grad, static_cast<S>(scale), correct);
    if (!part.ok()) return part;
    log_lik += *part;
  }
  if (grad != nullptr) prior_.add_gradient<S>(*grad, theta);
  last_neg_log_prior_ = prior_.neg_log_density<S>(theta);
  last_rows_ = rows;
  log_lik_rows_ = 0;
  last_mean_nll_ = -log_lik / static_cast<double>(rows);
  last_accuracy_ = static_cast<double>(correct) / static_cast<double>(rows);
  return last_neg_log_prior_ - scale * log_lik;
}

template <typename S>
Result<double> Potential<S>::evaluate_full(ConstVecRef<S> theta, ConstMatRef<S> x,
                                           std::span<const std::int32_t> labels,
                                           VecRef<S> grad) {
  return full(theta, x, labels, &grad);
}

template <typename S>
Result<double> Potential<S>::value_full(ConstVecRef<S> theta, ConstMatRef<S> x,
                                        std::span<const std::int32_t> labels) {
  return full(theta, x, labels, nullptr);
}

template class Potential<float>;
template class Potential<double>;

}  // namespace credence
