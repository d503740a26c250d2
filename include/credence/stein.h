// Kernel Stein discrepancy: how far a set of draws is from the target, using the target's
// score grad log pi at each draw (no normalising constant, no second sample).
//
// "Measuring Sample Quality with Kernels" (ICML 2017) with the Langevin Stein operator of
// "A Kernelized Stein Discrepancy for Goodness-of-fit Tests" (ICML 2016); docs/methods.md
// section 11. Inverse multiquadric kernel k(x, y) = (c^2 + ||x - y||^2)^beta, beta in
// (-1, 0), default c = 1, beta = -1/2 (the ICML 2017 paper's choice: unlike Gaussian kernels
// it detects non-convergence in any dimension). With r = x - y, q = c^2 + ||r||^2 and scores
// s(x), s(y):
//   k0(x, y) = -2 beta d q^(beta-1) - 4 beta (beta-1) q^(beta-2) ||r||^2
//              + 2 beta q^(beta-1) r . (s(y) - s(x)) + q^beta s(x) . s(y)
//   KSD^2 (V-statistic) = (1/n^2) sum_{i,j} k0(x_i, x_j)      (>= 0; KSD = its root)
//   KSD^2 (U-statistic) = 1/(n(n-1)) sum_{i != j} k0(x_i, x_j) (unbiased, may be < 0)
// Cost O(n^2 d) time and O(n d) memory for n draws of dimension d. Pure functions: safe
// from any thread.
#pragma once

#include <Eigen/Core>
#include <cstdint>

#include "credence/status.h"

namespace credence {

/// The IMQ kernel's two constants.
struct SteinKernel {
  double c = 1.0;      // > 0. Default 1.
  double beta = -0.5;  // in (-1, 0). Default -1/2.
};

/// The two estimates of KSD^2 and the discrepancy itself.
struct SteinDiscrepancy {
  double v_statistic = 0;  // >= 0 up to rounding
  double u_statistic = 0;  // NaN for one draw
  double ksd = 0;          // sqrt(max(V, 0))
  std::int64_t draws = 0;  // n
};

/// KSD of the draws (columns of `draws`, (d, n)) against the target whose score at each
/// draw is the matching column of `scores` ((d, n)). Fails with kInvalidInput on shape
/// mismatch, no draws, non-finite values or kernel constants out of range.
Result<SteinDiscrepancy> kernel_stein_discrepancy(const Eigen::MatrixXd& draws,
                                                  const Eigen::MatrixXd& scores,
                                                  const SteinKernel& kernel = {});

/// k0(x, y) of the formula above (for tests and worked examples).
double stein_kernel_value(const Eigen::VectorXd& x, const Eigen::VectorXd& y,
                          const Eigen::VectorXd& score_x, const Eigen::VectorXd& score_y,
                          const SteinKernel& kernel = {});

}  // namespace credence
