// Central finite differences and a readable comparison of two gradients (double).
#pragma once

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

namespace credence::testing {

/// (f(x + h e_i) - f(x - h e_i)) / (2h) for every coordinate i, with h scaled by
/// max(1, |x_i|). The error is O(h^2) plus rounding O(eps |f| / h).
template <typename F>
Eigen::VectorXd central_differences(F&& f, const Eigen::VectorXd& x, double h = 1e-6) {
  Eigen::VectorXd grad(x.size());
  Eigen::VectorXd probe = x;
  for (Eigen::Index i = 0; i < x.size(); ++i) {
    const double step = h * std::max(1.0, std::abs(x(i)));
    probe(i) = x(i) + step;
    const double up = f(probe);
    probe(i) = x(i) - step;
    const double down = f(probe);
    probe(i) = x(i);
    grad(i) = (up - down) / (2 * step);
  }
  return grad;
}

struct GradientComparison {
  double normwise = 0;   // ||a - b|| / max(1e-8, ||a|| + ||b||)
  double coordinate = 0;  // max_i |a_i - b_i| / max(1e-8, |a_i| + |b_i|)
  std::string report;    // the worst coordinates, for failure messages
};

/// Compares an analytic gradient with a numerical one, norm-wise and per coordinate.
inline GradientComparison compare_gradients(const Eigen::VectorXd& analytic,
                                            const Eigen::VectorXd& numeric) {
  GradientComparison result;
  result.normwise =
      (analytic - numeric).norm() / std::max(1e-8, analytic.norm() + numeric.norm());
  Eigen::Index worst = 0;
  for (Eigen::Index i = 0; i < analytic.size(); ++i) {
    const double rel = std::abs(analytic(i) - numeric(i)) /
                       std::max(1e-8, std::abs(analytic(i)) + std::abs(numeric(i)));
    if (rel > result.coordinate) {
      result.coordinate = rel;
      worst = i;
    }
  }
  char line[200];
  std::snprintf(line, sizeof line,
                "norm-wise rel %.3g, worst coordinate %ld: analytic %.12g numeric %.12g "
                "(rel %.3g), |grad| %.3g",
                result.normwise, static_cast<long>(worst),
                analytic.size() ? analytic(worst) : 0.0, numeric.size() ? numeric(worst) : 0.0,
                result.coordinate, analytic.norm());
  result.report = line;
  return result;
}

}  // namespace credence::testing
