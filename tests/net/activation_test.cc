// Tests of the activation kernels: known values and finite-difference derivatives.
#include "net/activation.h"

#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "testing/gradient_check.h"
#include "testing/seed.h"

namespace credence {
namespace {

constexpr Activation kAll[] = {Activation::kRelu, Activation::kTanh, Activation::kSigmoid,
                               Activation::kSoftplus, Activation::kIdentity};

MatX<double> apply(Activation f, const MatX<double>& z) {
  MatX<double> a(z.rows(), z.cols());
  activation_forward<double>(a, z, f);
  return a;
}

// Reference values: the definitions, evaluated with <cmath> (relu(z) = max(z, 0),
// sigmoid(z) = 1/(1+e^-z), softplus(z) = log(1+e^z)).
TEST(Activation, ForwardMatchesDefinitions) {
  MatX<double> z(1, 5);
  z << -2.5, -0.3, 0.0, 0.7, 3.0;
  for (Index i = 0; i < z.cols(); ++i) {
    const double v = z(0, i);
    EXPECT_DOUBLE_EQ(apply(Activation::kRelu, z)(0, i), std::max(v, 0.0));
    EXPECT_NEAR(apply(Activation::kTanh, z)(0, i), std::tanh(v), 1e-15);
    EXPECT_NEAR(apply(Activation::kSigmoid, z)(0, i), 1 / (1 + std::exp(-v)), 1e-15);
    EXPECT_NEAR(apply(Activation::kSoftplus, z)(0, i), std::log1p(std::exp(v)), 1e-15);
    EXPECT_DOUBLE_EQ(apply(Activation::kIdentity, z)(0, i), v);
  }
}

TEST(Activation, ExtremeInputsStayFinite) {
  MatX<float> z(1, 2);
  z << -1e4f, 1e4f;
  for (Activation f : kAll) {
    MatX<float> a(1, 2);
    activation_forward<float>(a, z, f);
    EXPECT_TRUE(a.allFinite()) << activation_name(f);
  }
  MatX<float> a(1, 2);
  activation_forward<float>(a, z, Activation::kSoftplus);
  EXPECT_EQ(a(0, 1), 1e4f);  // log(1 + e^z) = z when e^-z underflows
  EXPECT_EQ(a(0, 0), 0.0f);
  activation_forward<float>(a, z, Activation::kSigmoid);
  EXPECT_EQ(a(0, 0), 0.0f);
  EXPECT_EQ(a(0, 1), 1.0f);
}

// Reference: central finite differences of sum(c * f(z)) (h = 1e-6, double); inputs at
// least 0.05 away from relu's kink. Tolerance 1e-7 per coordinate (common practice).
TEST(Activation, BackwardMatchesFiniteDifferences) {
  std::mt19937_64 engine(testing::test_seed(21));
  std::uniform_real_distribution<double> uniform(-3.0, 3.0);
  MatX<double> z(3, 4), c(3, 4);
  for (Index i = 0; i < z.size(); ++i) {
    do z.data()[i] = uniform(engine);
    while (std::abs(z.data()[i]) < 0.05);
    c.data()[i] = uniform(engine);
  }
  for (Activation f : kAll) {
    MatX<double> a = apply(f, z);
    MatX<double> d_z(3, 4);
    activation_backward<double>(d_z, c, z, a, f);
    Eigen::VectorXd flat = Eigen::Map<const Eigen::VectorXd>(z.data(), z.size());
    auto value = [&](const Eigen::VectorXd& point) {
      MatX<double> zz = Eigen::Map<const MatX<double>>(point.data(), 3, 4);
      return (c.array() * apply(f, zz).array()).sum();
    };
    Eigen::VectorXd numeric = testing::central_differences(value, flat);
    Eigen::VectorXd analytic = Eigen::Map<const Eigen::VectorXd>(d_z.data(), d_z.size());
    testing::GradientComparison cmp = testing::compare_gradients(analytic, numeric);
    EXPECT_LE(cmp.coordinate, 1e-7) << activation_name(f) << ": " << cmp.report;
  }
}

TEST(Activation, BackwardMayWorkInPlace) {
  MatX<double> z(2, 2);
  z << -1.0, 0.5, 2.0, -0.25;
  for (Activation f : kAll) {
    MatX<double> a = apply(f, z);
    MatX<double> d = MatX<double>::Constant(2, 2, 1.5);
    MatX<double> expected(2, 2);
    activation_backward<double>(expected, d, z, a, f);
    activation_backward<double>(d, d, z, a, f);
    EXPECT_EQ(d, expected) << activation_name(f);
  }
}

}  // namespace
}  // namespace credence
