// PosteriorScore: log pi(theta) and grad log pi(theta) of a run's target over all its
// training rows (include/credence/run_stein.h, docs/methods.md section 11).
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "credence/run_stein.h"

namespace credence {

struct PosteriorScore::Impl {
  Potential<double> potential;
  Eigen::MatrixXd x;                 // (D, N)
  std::vector<std::int32_t> labels;  // (N)
  double temperature = 1;
  Tempering tempering = Tempering::kWholePosterior;
  bool learned = false;
  // Learned scale: per block the marginal prior's exponent A_b and rate r_b, so that
  // log p(theta_b) = -A_b log(r_b + ||theta_b||^2 / 2) + const.
  std::vector<double> exponent;
  std::vector<double> rate;
  Eigen::VectorXd gradient;     // (P) workspace for grad U
  Eigen::VectorXd fixed_prior;  // (P) lambda theta of the fixed prior

  // The factor on the summed log-likelihood that the potential leaves out: 1/T under
  // whole-posterior tempering (U is untempered), 1 under likelihood tempering (the
  // potential already holds the 1/T).
  double likelihood_factor() const {
    return tempering == Tempering::kWholePosterior ? 1 / temperature : 1.0;
  }
};

PosteriorScore::PosteriorScore(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
PosteriorScore::PosteriorScore(PosteriorScore&&) noexcept = default;
PosteriorScore& PosteriorScore::operator=(PosteriorScore&&) noexcept = default;
PosteriorScore::~PosteriorScore() = default;

bool PosteriorScore::learned_prior() const { return impl_->learned; }

Result<PosteriorScore> PosteriorScore::create(const ParamLayout& layout, const PriorSpec& prior,
                                              double temperature, Tempering tempering,
                                              Eigen::MatrixXd x, std::vector<std::int32_t> labels) {
  if (!(temperature > 0) || !std::isfinite(temperature)) {
    return Status::invalid_input(fmt::format(
        "Stein score: temperature {}; the target is a distribution only for T > 0", temperature));
  }
  if (x.cols() < 1 || x.cols() != static_cast<Index>(labels.size())) {
    return Status::invalid_input(
        fmt::format("Stein score: {} training columns and {} labels; give one label per row",
                    x.cols(), labels.size()));
  }
  PotentialSettings settings;
  settings.num_train_rows = x.cols();
  settings.max_batch_rows = std::min<Index>(x.cols(), 1024);
  settings.temperature = temperature;
  settings.tempering = tempering;
  settings.learn_prior_scale = false;  // the precisions stay at the spec's fixed values
  Result<Potential<double>> potential = Potential<double>::create(layout, prior, settings);
  if (!potential.ok()) return potential.status();
  auto impl = std::unique_ptr<Impl>(new Impl{std::move(*potential),
                                             std::move(x),
                                             std::move(labels),
                                             temperature,
                                             tempering,
                                             prior.learn_scale,
                                             {},
                                             {},
                                             {},
                                             {}});
  if (impl->learned) {
    // docs/methods.md section 11: integrating lambda_b ~ Gamma(a, r) out of the (tempered)
    // joint leaves (r + ||theta_b||^2/2)^(-A_b), A_b = (a - 1 + d_b/2)/T + 1 under
    // whole-posterior tempering and a + d_b/2 otherwise (the Gibbs draw of section 15).
    const GaussianPrior& p = impl->potential.prior();
    const double a = prior.hyper_shape;
    for (Index b = 0; b < p.num_blocks(); ++b) {
      const double d = static_cast<double>(p.block_size(b));
      const double lambda = p.block_precisions()[static_cast<std::size_t>(b)];
      impl->rate.push_back(prior.hyper_rate ? *prior.hyper_rate : a / lambda);
      impl->exponent.push_back(
          tempering == Tempering::kWholePosterior ? (a - 1 + d / 2) / temperature + 1 : a + d / 2);
    }
  }
  return PosteriorScore(std::move(impl));
}

Result<double> PosteriorScore::log_density(const Eigen::VectorXd& theta) {
  Impl& s = *impl_;
  Result<double> u = s.potential.value_full(theta, s.x, s.labels);
  if (!u.ok()) return u.status();
  const GaussianPrior& prior = s.potential.prior();
  const double fixed_neg_log_prior = prior.neg_log_density<double>(theta);
  // U = -log p_fixed - (factor the potential applies) sum log lik.
  const double log_lik = -(*u - fixed_neg_log_prior);
  if (!s.learned) return s.likelihood_factor() * (log_lik - fixed_neg_log_prior);
  double log_prior = 0;
  for (Index b = 0; b < prior.num_blocks(); ++b) {
    const auto i = static_cast<std::size_t>(b);
    log_prior -=
        s.exponent[i] * std::log(s.rate[i] + prior.block_squared_norm<double>(theta, b) / 2);
  }
  return s.likelihood_factor() * log_lik + log_prior;
}

Status PosteriorScore::score(const Eigen::VectorXd& theta, Eigen::VectorXd& score) {
  Impl& s = *impl_;
  s.gradient.resize(theta.size());
  Result<double> u = s.potential.evaluate_full(theta, s.x, s.labels, s.gradient);
  if (!u.ok()) return u.status();
  const GaussianPrior& prior = s.potential.prior();
  s.fixed_prior.setZero(theta.size());
  prior.add_gradient<double>(s.fixed_prior, theta);
  // grad of the (scaled) log-likelihood = -(grad U - lambda theta).
  score = s.likelihood_factor() * (s.fixed_prior - s.gradient);
  if (!s.learned) {
    score -= s.likelihood_factor() * s.fixed_prior;
    return Status::ok_status();
  }
  for (Index b = 0; b < prior.num_blocks(); ++b) {
    const auto i = static_cast<std::size_t>(b);
    const double q = s.rate[i] + prior.block_squared_norm<double>(theta, b) / 2;
    score.segment(prior.block_offset(b), prior.block_size(b)) -=
        (s.exponent[i] / q) * theta.segment(prior.block_offset(b), prior.block_size(b));
  }
  return Status::ok_status();
}

}  // namespace credence
