// Stationary second moments of many parallel 1-D chains, with batch-means standard errors.
#pragma once

#include <cmath>
#include <functional>
#include <vector>

#include "credence/samplers.h"

namespace credence::testing {

/// A time average and its standard error from 20 batch means.
struct Estimate {
  double value = 0;
  double standard_error = 0;
};

inline Estimate batch_means(const std::vector<double>& series) {
  const int batches = 20;
  const std::size_t per = series.size() / batches;
  double sum = 0, sum2 = 0;
  for (int b = 0; b < batches; ++b) {
    double mean = 0;
    for (std::size_t i = 0; i < per; ++i) mean += series[b * per + i];
    mean /= static_cast<double>(per);
    sum += mean;
    sum2 += mean * mean;
  }
  const double mean = sum / batches;
  const double var = (sum2 - batches * mean * mean) / (batches - 1);
  return {mean, std::sqrt(var / batches)};
}

/// Runs `sampler` for burn_in + steps steps at constant step size from theta = 0
/// (or from `theta` when given) and returns the time series, every record_every steps, of
/// `statistic(theta, sampler)` after burn-in.
inline std::vector<double> stationary_series(
    Sampler& sampler, PotentialFn& potential, Eigen::Index parameters, int burn_in, int steps,
    const std::function<double(const Eigen::VectorXf&, const Sampler&)>& statistic,
    Eigen::VectorXf theta = {}, int record_every = 1) {
  if (theta.size() == 0) theta = Eigen::VectorXf::Zero(parameters);
  std::vector<double> series;
  series.reserve(static_cast<std::size_t>(steps));
  for (int t = 0; t < burn_in + steps; ++t) {
    StepContext context;
    context.step = t;
    context.step_size = sampler.base_step_size();
    context.burn_in = t < burn_in;
    StepReport report;
    if (!sampler.step(theta, potential, context, report).ok()) return {};
    if (t >= burn_in && (t - burn_in) % record_every == 0) {
      series.push_back(statistic(theta, sampler));
    }
  }
  return series;
}

/// Mean of x_i^2 over the coordinates.
inline double mean_square(const Eigen::VectorXf& x) {
  return x.cast<double>().squaredNorm() / static_cast<double>(x.size());
}

/// Mean of p_i^2 over the momentum "p" a momentum sampler stores in its state.
inline double mean_square_momentum(const Sampler& sampler) {
  const auto p = sampler.save_state().floats.at("p");
  double sum = 0;
  for (float x : p) sum += static_cast<double>(x) * x;
  return sum / static_cast<double>(p.size());
}

/// A momentum sampler's series of mean theta_i^2 and mean p_i^2, from theta = 0,
/// recorded every `every` steps after `burn_in` (see stationary_series).
struct PositionMomentumSeries {
  std::vector<double> theta2, p2;
};
inline PositionMomentumSeries position_momentum_series(Sampler& sampler, PotentialFn& potential,
                                                       Eigen::Index parameters, int burn_in,
                                                       int steps, int every) {
  PositionMomentumSeries out;
  out.theta2 = stationary_series(
      sampler, potential, parameters, burn_in, steps,
      [&](const Eigen::VectorXf& theta, const Sampler& s) {
        out.p2.push_back(mean_square_momentum(s));
        return mean_square(theta);
      },
      {}, every);
  return out;
}

}  // namespace credence::testing
