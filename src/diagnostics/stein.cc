// Kernel Stein discrepancy with the IMQ kernel (include/credence/stein.h).
#include "credence/stein.h"

#include <fmt/format.h>

#include <cmath>
#include <limits>

namespace credence {
namespace {

// k0 from the pieces: squared distance, r . (s_y - s_x) and s_x . s_y.
double k0(double r2, double r_dot_score_gap, double score_dot, double d, const SteinKernel& k) {
  const double q = k.c * k.c + r2;
  const double b = k.beta;
  const double q_b1 = std::pow(q, b - 1);
  return -2 * b * d * q_b1 - 4 * b * (b - 1) * q_b1 / q * r2 + 2 * b * q_b1 * r_dot_score_gap +
         q_b1 * q * score_dot;
}

}  // namespace

double stein_kernel_value(const Eigen::VectorXd& x, const Eigen::VectorXd& y,
                          const Eigen::VectorXd& score_x, const Eigen::VectorXd& score_y,
                          const SteinKernel& kernel) {
  const Eigen::VectorXd r = x - y;
  return k0(r.squaredNorm(), r.dot(score_y - score_x), score_x.dot(score_y),
            static_cast<double>(x.size()), kernel);
}

Result<SteinDiscrepancy> kernel_stein_discrepancy(const Eigen::MatrixXd& draws,
                                                  const Eigen::MatrixXd& scores,
                                                  const SteinKernel& kernel) {
  if (!(kernel.c > 0) || !(kernel.beta > -1 && kernel.beta < 0) || !std::isfinite(kernel.c)) {
    return Status::invalid_input(fmt::format(
        "Stein kernel: c = {} and beta = {}; give c > 0 and beta in (-1, 0)", kernel.c,
        kernel.beta));
  }
  if (draws.cols() < 1 || draws.rows() < 1 || draws.rows() != scores.rows() ||
      draws.cols() != scores.cols()) {
    return Status::invalid_input(fmt::format(
        "Stein discrepancy: {} x {} draws against {} x {} scores; give one score per draw",
        draws.rows(), draws.cols(), scores.rows(), scores.cols()));
  }
  if (!draws.allFinite() || !scores.allFinite()) {
    return Status::invalid_input("Stein discrepancy: a draw or a score is not finite");
  }
  const Eigen::Index n = draws.cols();
  const auto d = static_cast<double>(draws.rows());
  // Pairwise products from three Gram matrices would need O(n^2) memory; the double loop
  // over i < j needs O(n d) and visits each pair once (k0 is symmetric).
  const Eigen::VectorXd x_dot_s = (draws.cwiseProduct(scores)).colwise().sum().transpose();
  double diagonal = 0, off = 0;
  for (Eigen::Index i = 0; i < n; ++i) {
    diagonal += k0(0, 0, scores.col(i).squaredNorm(), d, kernel);
    for (Eigen::Index j = i + 1; j < n; ++j) {
      const double r2 = (draws.col(i) - draws.col(j)).squaredNorm();
      // r . (s_j - s_i) = x_i.s_j - x_i.s_i - x_j.s_j + x_j.s_i
      const double gap = draws.col(i).dot(scores.col(j)) - x_dot_s[i] - x_dot_s[j] +
                         draws.col(j).dot(scores.col(i));
      off += 2 * k0(r2, gap, scores.col(i).dot(scores.col(j)), d, kernel);
    }
  }
  const auto nn = static_cast<double>(n);
  SteinDiscrepancy out;
  out.draws = n;
  out.v_statistic = (diagonal + off) / (nn * nn);
  out.u_statistic =
      n > 1 ? off / (nn * (nn - 1)) : std::numeric_limits<double>::quiet_NaN();
  out.ksd = std::sqrt(std::max(out.v_statistic, 0.0));
  return out;
}

}  // namespace credence
