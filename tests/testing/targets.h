// Test problems with known answers for the samplers (STYLE.md rule 22): Gaussian
// targets with known stationary moments, a convex quadratic with a known minimiser,
// and Bayesian linear regression with its closed-form posterior (docs/methods.md 12.1).
#pragma once

#include <Eigen/Cholesky>
#include <Eigen/Core>
#include <cmath>
#include <cstdint>

#include "credence/samplers_potential.h"
#include "util/rng.h"

namespace credence::testing {

/// Inverse of a small symmetric positive-definite matrix by Gauss-Jordan elimination
/// in plain loops (Eigen's decompositions trip gcc 12's maybe-uninitialized check
/// under AVX-512).
inline Eigen::MatrixXd inverse_spd(const Eigen::MatrixXd& a) {
  const Eigen::Index n = a.rows();
  Eigen::MatrixXd m = a;
  Eigen::MatrixXd inv = Eigen::MatrixXd::Identity(n, n);
  for (Eigen::Index k = 0; k < n; ++k) {
    const double pivot = m(k, k);
    for (Eigen::Index j = 0; j < n; ++j) {
      m(k, j) /= pivot;
      inv(k, j) /= pivot;
    }
    for (Eigen::Index i = 0; i < n; ++i) {
      if (i == k) continue;
      const double f = m(i, k);
      for (Eigen::Index j = 0; j < n; ++j) {
        m(i, j) -= f * m(k, j);
        inv(i, j) -= f * inv(k, j);
      }
    }
  }
  return inv;
}

/// Independent coordinates, U = sum_i theta_i^2 / (2 var_i): many parallel 1-D chains
/// in one vector. Optional additive Gaussian gradient noise of variance `noise_var`
/// (g units), reported through gradient_noise_variance().
class IndependentGaussian : public PotentialFn {
 public:
  IndependentGaussian(Eigen::VectorXf variance, double noise_var = 0.0, std::uint64_t seed = 1)
      : precision_(variance.cwiseInverse()),
        noise_var_(noise_var),
        rng_(seed),
        noise_(Eigen::VectorXf::Zero(variance.size())) {}

  std::int64_t rows() const override { return 1; }

  Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) override {
    grad = precision_.cwiseProduct(theta);
    out.potential = 0.5 * static_cast<double>(theta.cwiseAbs2().dot(precision_));
    if (noise_var_ > 0) {
      rng_.fill_normal({noise_.data(), static_cast<std::size_t>(noise_.size())});
      grad += static_cast<float>(std::sqrt(noise_var_)) * noise_;
    }
    return Status::ok_status();
  }

  Status full(ConstThetaRef theta, ThetaRef grad, double& potential) override {
    grad = precision_.cwiseProduct(theta);
    potential = 0.0;
    for (Eigen::Index i = 0; i < theta.size(); ++i) {
      potential += 0.5 * static_cast<double>(theta[i]) * theta[i] * precision_[i];
    }
    return Status::ok_status();
  }

  bool gradient_noise_variance(ThetaRef vhat) override {
    vhat.setConstant(static_cast<float>(noise_var_));
    return true;
  }

 private:
  Eigen::VectorXf precision_;  // (P)
  double noise_var_;
  Rng rng_;
  Eigen::VectorXf noise_;  // (P)
};

/// R replicas of a d-dimensional N(mean, Sigma) target laid out as theta = [x_1; ...; x_R]
/// (each x_r of length d): U = sum_r (x_r - mean)^T Sigma^{-1} (x_r - mean) / 2.
/// Optional additive gradient noise as above. full() = minibatch() without noise.
class ReplicatedGaussian : public PotentialFn {
 public:
  ReplicatedGaussian(Eigen::VectorXd mean, Eigen::MatrixXd covariance, int replicas,
                     double noise_var = 0.0, std::uint64_t seed = 1)
      : mean_(mean.cast<float>()),
        precision_(inverse_spd(covariance).cast<float>()),
        replicas_(replicas),
        noise_var_(noise_var),
        rng_(seed),
        noise_(Eigen::VectorXf::Zero(mean.size() * replicas)),
        centred_(mean.size(), replicas) {}

  std::int64_t rows() const override { return 1; }
  Eigen::Index dimension() const { return mean_.size(); }

  Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) override {
    CREDENCE_RETURN_IF_ERROR(full(theta, grad, out.potential));
    if (noise_var_ > 0) {
      rng_.fill_normal({noise_.data(), static_cast<std::size_t>(noise_.size())});
      grad += static_cast<float>(std::sqrt(noise_var_)) * noise_;
    }
    return Status::ok_status();
  }

  Status full(ConstThetaRef theta, ThetaRef grad, double& potential) override {
    const Eigen::Index d = mean_.size();
    Eigen::Map<const Eigen::MatrixXf> x(theta.data(), d, replicas_);  // (d, R)
    Eigen::Map<Eigen::MatrixXf> g(grad.data(), d, replicas_);         // (d, R)
    centred_ = x.colwise() - mean_;
    g.noalias() = precision_ * centred_;
    potential = 0.5 * static_cast<double>(centred_.cwiseProduct(g).sum());
    return Status::ok_status();
  }

  bool gradient_noise_variance(ThetaRef vhat) override {
    vhat.setConstant(static_cast<float>(noise_var_));
    return true;
  }

 private:
  Eigen::VectorXf mean_;       // (d)
  Eigen::MatrixXf precision_;  // (d, d)
  int replicas_;
  double noise_var_;
  Rng rng_;
  Eigen::VectorXf noise_;    // (d R)
  Eigen::MatrixXf centred_;  // (d, R)
};

/// Correlation rho between every pair, standard deviations log-spaced from
/// `smallest` to 1 (docs/methods.md 12.2 style, generalised to d dimensions).
inline Eigen::MatrixXd correlated_covariance(int d, double rho, double smallest) {
  Eigen::VectorXd sd(d);
  for (int i = 0; i < d; ++i) {
    const double f = d == 1 ? 1.0 : static_cast<double>(i) / (d - 1);
    sd[i] = std::pow(smallest, 1.0 - f);
  }
  Eigen::MatrixXd c = Eigen::MatrixXd::Constant(d, d, rho);
  c.diagonal().setOnes();
  return sd.asDiagonal() * c * sd.asDiagonal();
}

/// Bayesian linear regression with known noise, the data of docs/methods.md 12.1:
/// x = (-1, 0, 1, 2), t = (-1.1, 0.2, 0.9, 2.1), phi(x) = (1, x), alpha = 1, beta = 4,
/// replicated R times in theta = [w_1; ...; w_R] (w_r of length 2). minibatch() uses
/// one row per call, cycling through the rows of a fixed permutation per epoch, with
/// the N/b = 4 scaling; full() uses all rows.
class LinearRegressionPosterior : public PotentialFn {
 public:
  explicit LinearRegressionPosterior(int replicas) : replicas_(replicas) {}

  std::int64_t rows() const override { return 4; }

  static Eigen::Matrix2d posterior_covariance() {
    Eigen::Matrix2d s;
    s << 25, -8, -8, 17;
    return s / 361.0;
  }
  static Eigen::Vector2d posterior_mean() { return Eigen::Vector2d(11.6 / 361, 354.4 / 361); }

  Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) override {
    static constexpr int kOrder[4] = {2, 0, 3, 1};
    const int row = kOrder[next_ % 4];
    ++next_;
    out.potential = evaluate(theta, grad, row, row + 1, 4.0);
    return Status::ok_status();
  }

  Status full(ConstThetaRef theta, ThetaRef grad, double& potential) override {
    potential = evaluate(theta, grad, 0, 4, 1.0);
    return Status::ok_status();
  }

 private:
  // U~ = (alpha/2)|w|^2 + scale (beta/2) sum_{n in rows} (t_n - w0 - w1 x_n)^2 per replica.
  double evaluate(ConstThetaRef theta, ThetaRef grad, int first, int last, double scale) const {
    static constexpr double kX[4] = {-1, 0, 1, 2};
    static constexpr double kT[4] = {-1.1, 0.2, 0.9, 2.1};
    constexpr double kAlpha = 1, kBeta = 4;
    double total = 0;
    for (int r = 0; r < replicas_; ++r) {
      const double w0 = theta[2 * r], w1 = theta[2 * r + 1];
      double g0 = kAlpha * w0, g1 = kAlpha * w1;
      double u = 0.5 * kAlpha * (w0 * w0 + w1 * w1);
      for (int n = first; n < last; ++n) {
        const double residual = kT[n] - w0 - w1 * kX[n];
        u += scale * 0.5 * kBeta * residual * residual;
        g0 -= scale * kBeta * residual;
        g1 -= scale * kBeta * residual * kX[n];
      }
      grad[2 * r] = static_cast<float>(g0);
      grad[2 * r + 1] = static_cast<float>(g1);
      total += u;
    }
    return total;
  }

  int replicas_;
  std::uint64_t next_ = 0;
};

}  // namespace credence::testing
