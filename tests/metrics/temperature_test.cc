// Tests of temperature scaling (src/metrics/temperature.cc) against docs/methods.md 9.4.
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <limits>
#include <random>

#include "credence/metrics.h"
#include "testing/seed.h"

namespace credence {
namespace {

TEST(TemperatureScaling, MatchesMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values": tau* = 1.66702504, NLL(tau*) = 0.91001409,
  // NLL(1) = 0.97079119 (derived there with SciPy).
  Eigen::MatrixXd rows(6, 3);
  rows << 2, .5, -1, .2, 1.5, .3, 3, -.5, 0, .1, .2, 2.5, 1, 1.2, .8, -.5, 2, .5;
  const Eigen::MatrixXd z = rows.transpose();  // (K, n)
  const std::vector<std::int32_t> y = {0, 1, 1, 2, 0, 1};
  const Result<TemperatureFit> fit = fit_temperature(z, y);
  ASSERT_TRUE(fit.ok()) << fit.status().to_string();
  // docs/methods.md gives tau* to 8 decimals from a looser search; the exact stationary point is
  // 1.6670250006 (SciPy: NLL'(s) = 9e-14 there, -1.3e-8 at 1.66702504), hence 5e-8.
  EXPECT_NEAR(fit->temperature, 1.66702504, 5e-8);
  EXPECT_NEAR(fit->temperature, 1.6670250006, 1e-9);
  EXPECT_NEAR(fit->nll_after, 0.91001409, 5e-9);
  EXPECT_NEAR(fit->nll_before, 0.97079119, 5e-9);
  EXPECT_FALSE(fit->at_bound);
  EXPECT_LT(fit->iterations, 30);
  EXPECT_NEAR(temperature_nll(z, y, fit->temperature), fit->nll_after, 1e-14);
  EXPECT_NEAR(temperature_nll(z, y, 1.0), 0.97079119, 5e-9);
  // The minimum: nearby temperatures are worse.
  EXPECT_GT(temperature_nll(z, y, fit->temperature * 1.001), fit->nll_after);
  EXPECT_GT(temperature_nll(z, y, fit->temperature / 1.001), fit->nll_after);
  // Scaling keeps the argmax (docs/methods.md 9.4: accuracy unchanged) and stays normalised.
  const Eigen::MatrixXd scaled = apply_temperature(z, fit->temperature);
  EXPECT_EQ(predicted_classes(scaled), predicted_classes(z));
  EXPECT_TRUE(scaled.array().exp().colwise().sum().isApproxToConstant(1.0, 1e-15));
  // Log pbar and logits differ by a constant per row: the same tau.
  const Eigen::MatrixXd log_p = apply_temperature(z, 1.0);
  EXPECT_NEAR(fit_temperature(log_p, y)->temperature, fit->temperature, 1e-9);
}

TEST(TemperatureScaling, RecoversAKnownTemperature) {
  // Synthetic check (docs/methods.md 9 "Test values", here with tau = 2.5 and more rows):
  // logits N(0, 3^2) in 4 classes, labels drawn from softmax(z / 2.5). The fitted tau's
  // standard error at n = 100000 is about 0.4%; the tolerance is 2%.
  std::mt19937_64 gen(testing::test_seed(901));
  std::normal_distribution<double> normal(0.0, 3.0);
  std::uniform_real_distribution<double> uniform(0.0, 1.0);
  const Eigen::Index n = 100000;
  const double tau = 2.5;
  Eigen::MatrixXd z(4, n);
  std::vector<std::int32_t> y(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) {
    for (Eigen::Index k = 0; k < 4; ++k) z(k, i) = normal(gen);
    Eigen::Vector4d p = (z.col(i) / tau).array().exp();
    p /= p.sum();
    double u = uniform(gen);
    std::int32_t label = 3;
    for (std::int32_t k = 0; k < 3; ++k) {
      if (u < p[k]) {
        label = k;
        break;
      }
      u -= p[k];
    }
    y[static_cast<std::size_t>(i)] = label;
  }
  const Result<TemperatureFit> fit = fit_temperature(z, y);
  ASSERT_TRUE(fit.ok());
  std::cout << "fitted tau " << fit->temperature << " (true " << tau << ")\n";
  EXPECT_NEAR(fit->temperature, tau, 0.02 * tau);
  EXPECT_LT(fit->nll_after, fit->nll_before);
}

TEST(TemperatureScaling, ReportsBoundsAndBadInput) {
  // Source: docs/methods.md 9.4 search range log tau in [-5, 5]; messages per STYLE.md rule 17.
  Eigen::MatrixXd z(2, 2);
  z << 1, -1, -1, 1;  // both rows predicted right: NLL falls as tau -> 0
  const std::vector<std::int32_t> y = {0, 1};
  const Result<TemperatureFit> low = fit_temperature(z, y);
  ASSERT_TRUE(low.ok());
  EXPECT_TRUE(low->at_bound);
  EXPECT_NEAR(low->temperature, std::exp(-5.0), 1e-15);
  // Both wrong: NLL falls as tau grows.
  const Result<TemperatureFit> high = fit_temperature(z, std::vector<std::int32_t>{1, 0});
  ASSERT_TRUE(high.ok());
  EXPECT_NEAR(high->temperature, std::exp(5.0), 1e-9);
  z(0, 1) = std::numeric_limits<double>::quiet_NaN();
  Result<TemperatureFit> bad = fit_temperature(z, y);
  ASSERT_FALSE(bad.ok());
  EXPECT_NE(bad.status().message().find("row 1 has a NaN"), std::string::npos);
  z(0, 1) = 0.0;
  z(1, 1) = -std::numeric_limits<double>::infinity();
  bad = fit_temperature(z, y);
  ASSERT_FALSE(bad.ok());
  EXPECT_NE(bad.status().message().find("row 1 gives its label probability 0"), std::string::npos);
  // -inf off the label is allowed (a class with probability exactly 0).
  z(1, 1) = 0.0;
  z(1, 0) = -std::numeric_limits<double>::infinity();
  EXPECT_TRUE(fit_temperature(z, y).ok());
}

}  // namespace
}  // namespace credence
