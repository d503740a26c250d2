// Step-size robustness on an ill-conditioned target, as claimed for relativistic
// SGHMC in "Relativistic Monte Carlo" (AISTATS 2017): bounded speed keeps rsghmc
// finite where sghmc diverges; the driver reports sghmc's divergence as an outcome.
#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "credence/samplers.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

constexpr Eigen::Index kP = 200;

// Precisions log-spaced over 1 .. 1e4: gradient scales span 1e4.
Eigen::VectorXf variances() {
  Eigen::VectorXf v(kP);
  for (Eigen::Index i = 0; i < kP; ++i) {
    v[i] = static_cast<float>(std::pow(10.0, -4.0 * static_cast<double>(i) / (kP - 1)));
  }
  return v;
}

struct Result1 {
  ChainOutcome outcome;
  double widest_variance = 0;    // sample variance of the coordinate with variance 1
  double stiffest_variance = 0;  // ... and of the one with variance 1e-4
};

Result1 run(Method method, double eps, std::uint64_t seed) {
  SamplerSettings s;
  s.method = method;
  // Same Newtonian dynamics for both (docs/methods.md 5.4): eta = eps^2 / m, alpha = eps D / m
  // with m = 1, D = 1; rsghmc adds the speed limit c = 1.
  s.step_size = method == Method::kSghmc ? eps * eps : eps;
  s.sghmc.alpha = eps;
  s.relativistic.mass = 1;
  s.relativistic.speed = 1;
  s.relativistic.friction = 1;
  s.relativistic.adapt_mass = false;
  ChainSettings c;
  c.chains = 1;
  c.burn_in = 500;
  c.thin = 5;
  c.samples = 400;
  c.seed = seed;
  Result1 r;
  double sum2 = 0, stiff2 = 0;
  double n = 0;
  ChainHooks hooks;
  hooks.on_sample = [&](const KeptSample& k) {
    sum2 += static_cast<double>(k.theta[0]) * k.theta[0];
    stiff2 += static_cast<double>(k.theta[kP - 1]) * k.theta[kP - 1];
    ++n;
  };
  auto factory = [](int) { return std::make_unique<testing::IndependentGaussian>(variances()); };
  auto init = [](int, ThetaRef theta) {
    theta.setConstant(0.01f);
    return Status::ok_status();
  };
  Result<RunOutcome> outcome = run_chains(s, c, kP, factory, init, hooks);
  EXPECT_TRUE(outcome.ok());
  r.outcome = outcome->chains[0];
  r.widest_variance = n > 0 ? sum2 / n : 0;
  r.stiffest_variance = n > 0 ? stiff2 / n : 0;
  return r;
}

TEST(Robustness, RsghmcStaysFiniteOverAHundredfoldStepRangeWhereSghmcDiverges) {
  const std::uint64_t seed = testing::test_seed(81);
  const std::vector<double> steps = {0.003, 0.01, 0.03, 0.1, 0.3};
  // Reported, not asserted: how well the finite rsghmc chains sample (targets 1 and
  // 1e-4) over this short run.
  std::printf("%-8s %-8s %-10s %-6s %-11s %s\n", "eps", "method", "outcome", "step", "Var(widest)",
              "Var(stiffest)");
  int sghmc_diverged_upper = 0;
  for (double eps : steps) {
    for (Method method : {Method::kSghmc, Method::kRsghmc}) {
      Result1 r = run(method, eps, seed);
      std::printf("%-8.3g %-8s %-10s %-6lld %-11.4f %-13.3g %s\n", eps,
                  std::string(method_name(method)).c_str(),
                  std::string(chain_end_name(r.outcome.end)).c_str(),
                  static_cast<long long>(r.outcome.step), r.widest_variance, r.stiffest_variance,
                  r.outcome.reason.c_str());
      if (method == Method::kRsghmc) {
        EXPECT_EQ(r.outcome.end, ChainEnd::kCompleted) << "rsghmc at eps " << eps;
        EXPECT_TRUE(r.outcome.checkpoint.theta.allFinite());
      } else if (eps >= 0.1) {
        // Newtonian stability needs eta * 1e4 < 2 (2 - alpha): eta = eps^2 >= 0.01 is
        // far beyond it. Divergence must be an outcome with a reason, never NaN samples.
        EXPECT_EQ(r.outcome.end, ChainEnd::kDiverged) << "sghmc at eps " << eps;
        EXPECT_FALSE(r.outcome.reason.empty());
        if (r.outcome.end == ChainEnd::kDiverged) ++sghmc_diverged_upper;
      }
    }
  }
  EXPECT_EQ(sghmc_diverged_upper, 2);
}

}  // namespace
}  // namespace credence
