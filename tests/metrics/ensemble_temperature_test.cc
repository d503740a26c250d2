// Member-wise temperature scaling of an ensemble (src/metrics/ensemble_temperature.cc):
// docs/methods.md 9.4's worked example, recovery of a known temperature, and the NLL against
// a plain double loop.
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <limits>
#include <random>
#include <vector>

#include "credence/metrics.h"
#include "testing/seed.h"

namespace credence {
namespace {

// docs/methods.md 9 "Test values": the 6-row, 3-class logits and labels of the temperature example.
Eigen::MatrixXd worked_logits() {
  Eigen::MatrixXd rows(6, 3);
  rows << 2, .5, -1, .2, 1.5, .3, 3, -.5, 0, .1, .2, 2.5, 1, 1.2, .8, -.5, 2, .5;
  return rows.transpose();  // (K, n)
}
const std::vector<std::int32_t> kWorkedLabels = {0, 1, 1, 2, 0, 1};

// The definition written out with no shortcut: pbar_y = (1/S) sum_s exp(l_sy / tau) /
// sum_k exp(l_sk / tau), NLL = -mean_i log pbar_y (no max shift: the example is small).
double hand_nll(const std::vector<Eigen::MatrixXd>& members, const std::vector<std::int32_t>& y,
                double tau) {
  double total = 0;
  for (std::size_t i = 0; i < y.size(); ++i) {
    const auto col = static_cast<Eigen::Index>(i);
    double pbar = 0;
    for (const Eigen::MatrixXd& m : members) {
      double denominator = 0;
      for (Eigen::Index k = 0; k < m.rows(); ++k) denominator += std::exp(m(k, col) / tau);
      pbar += std::exp(m(y[i], col) / tau) / denominator;
    }
    total -= std::log(pbar / static_cast<double>(members.size()));
  }
  return total / static_cast<double>(y.size());
}

TEST(EnsembleTemperature, OneMemberIsPlainTemperatureScaling) {
  // Source: docs/methods.md 9 "Test values", tau* = 1.6670250006 (exact stationary point,
  // see temperature_test.cc), NLL(tau*) = 0.91001409, NLL(1) = 0.97079119.
  const std::vector<Eigen::MatrixXd> one = {apply_temperature(worked_logits(), 1.0)};
  const Result<TemperatureFit> fit = fit_ensemble_temperature(one, kWorkedLabels);
  ASSERT_TRUE(fit.ok()) << fit.status().to_string();
  EXPECT_NEAR(fit->temperature, 1.6670250006, 1e-9);
  EXPECT_NEAR(fit->nll_after, 0.91001409, 5e-9);
  EXPECT_NEAR(fit->nll_before, 0.97079119, 5e-9);
  const Result<TemperatureFit> plain = fit_temperature(one[0], kWorkedLabels);
  ASSERT_TRUE(plain.ok());
  EXPECT_EQ(fit->temperature, plain->temperature);
  EXPECT_NEAR(ensemble_temperature_nll(one, kWorkedLabels, 1.3),
              temperature_nll(one[0], kWorkedLabels, 1.3), 1e-14);

  // Two identical members average to that member, so the several-member search (scan and
  // golden section, not the one-member shortcut) must find the same tau. Its tolerance is
  // 1e-9 in log tau; the NLL is flat near the minimum, so 1e-7 on tau.
  const std::vector<Eigen::MatrixXd> twins = {one[0], one[0]};
  const Result<TemperatureFit> twin_fit = fit_ensemble_temperature(twins, kWorkedLabels);
  ASSERT_TRUE(twin_fit.ok());
  EXPECT_NEAR(twin_fit->temperature, 1.6670250006, 1e-7);
  EXPECT_NEAR(twin_fit->nll_after, 0.91001409, 5e-9);
  EXPECT_FALSE(twin_fit->at_bound);
}

TEST(EnsembleTemperature, NllMatchesThePlainDoubleLoop) {
  // Three members of the worked example perturbed by fixed offsets; reference: hand_nll.
  const Eigen::MatrixXd z = worked_logits();
  std::vector<Eigen::MatrixXd> members;
  for (int s = 0; s < 3; ++s) {
    Eigen::MatrixXd zs = z;
    for (Eigen::Index i = 0; i < zs.size(); ++i) {
      zs.data()[i] += 0.4 * std::sin(1.7 * static_cast<double>(i) + 2.3 * s);
    }
    members.push_back(apply_temperature(zs, 1.0));  // log-probabilities (K, n)
  }
  for (double tau : {0.3, 0.7, 1.0, 1.9, 6.0}) {
    EXPECT_NEAR(ensemble_temperature_nll(members, kWorkedLabels, tau),
                hand_nll(members, kWorkedLabels, tau), 1e-13)
        << "tau " << tau;
  }
}

TEST(EnsembleTemperature, RecoversAKnownTemperature) {
  // The check of temperature scaling ("On Calibration of Modern Neural Networks",
  // ICML 2017): logits z ~ N(0, 3^2) in 4 classes, members z_s = z + N(0, 0.3^2), labels
  // drawn from the tempered ensemble average (1/S) sum_s softmax(z_s / 2.5). The fit must
  // recover 2.5 within 2% (measured over seeds 1-4 and 5021: within 1%).
  std::mt19937_64 gen(testing::test_seed(5021));
  std::normal_distribution<double> normal(0.0, 1.0);
  std::uniform_real_distribution<double> uniform(0.0, 1.0);
  const Eigen::Index n = 50000;
  const int classes = 4;
  const int members = 4;
  const double tau = 2.5;
  std::vector<Eigen::MatrixXd> logits(members, Eigen::MatrixXd(classes, n));
  std::vector<std::int32_t> y(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) {
    Eigen::VectorXd z(classes);
    for (int k = 0; k < classes; ++k) z(k) = 3.0 * normal(gen);
    Eigen::VectorXd pbar = Eigen::VectorXd::Zero(classes);
    for (int s = 0; s < members; ++s) {
      for (int k = 0; k < classes; ++k) logits[s](k, i) = z(k) + 0.3 * normal(gen);
      Eigen::VectorXd p = (logits[s].col(i) / tau).array().exp();
      pbar += p / p.sum() / members;
    }
    double u = uniform(gen);
    std::int32_t label = classes - 1;
    for (std::int32_t k = 0; k + 1 < classes; ++k) {
      if (u < pbar(k)) {
        label = k;
        break;
      }
      u -= pbar(k);
    }
    y[static_cast<std::size_t>(i)] = label;
  }
  std::vector<Eigen::MatrixXd> log_probs;  // member log-probabilities, as evaluate keeps them
  for (const Eigen::MatrixXd& l : logits) log_probs.push_back(apply_temperature(l, 1.0));

  const Result<TemperatureFit> fit = fit_ensemble_temperature(log_probs, y);
  ASSERT_TRUE(fit.ok()) << fit.status().to_string();
  std::cout << "fitted tau " << fit->temperature << " (true " << tau << "), nll "
            << fit->nll_before << " -> " << fit->nll_after << "\n";
  EXPECT_NEAR(fit->temperature, tau, 0.02 * tau);
  EXPECT_LT(fit->nll_after, fit->nll_before);
  EXPECT_FALSE(fit->at_bound);
  // A minimum: both neighbours are worse (common practice check, no source).
  EXPECT_NEAR(ensemble_temperature_nll(log_probs, y, fit->temperature), fit->nll_after, 1e-12);
  EXPECT_LT(fit->nll_after, ensemble_temperature_nll(log_probs, y, fit->temperature * 1.01));
  EXPECT_LT(fit->nll_after, ensemble_temperature_nll(log_probs, y, fit->temperature / 1.01));
}

TEST(EnsembleTemperature, RefusesNanAndImpossibleLabels) {
  const Eigen::MatrixXd good = apply_temperature(worked_logits(), 1.0);
  Eigen::MatrixXd nan_member = good;
  nan_member(1, 2) = std::numeric_limits<double>::quiet_NaN();
  const std::vector<Eigen::MatrixXd> with_nan = {good, nan_member};
  const Result<TemperatureFit> fit = fit_ensemble_temperature(with_nan, kWorkedLabels);
  ASSERT_FALSE(fit.ok());
  EXPECT_EQ(fit.status().code(), StatusCode::kInvalidInput);
  EXPECT_NE(fit.status().message().find("NaN"), std::string::npos) << fit.status().message();

  const std::vector<Eigen::MatrixXd> one_nan = {nan_member};
  const Result<TemperatureFit> single = fit_ensemble_temperature(one_nan, kWorkedLabels);
  ASSERT_FALSE(single.ok());
  EXPECT_EQ(single.status().code(), StatusCode::kInvalidInput);

  // Row 0's label (class 0) has probability 0 under both members: no tau helps.
  Eigen::MatrixXd zero = good;
  zero(0, 0) = -std::numeric_limits<double>::infinity();
  const std::vector<Eigen::MatrixXd> impossible = {zero, zero};
  const Result<TemperatureFit> hopeless = fit_ensemble_temperature(impossible, kWorkedLabels);
  ASSERT_FALSE(hopeless.ok());
  EXPECT_EQ(hopeless.status().code(), StatusCode::kInvalidInput);
}

}  // namespace
}  // namespace credence
