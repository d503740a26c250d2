// The chain driver: threads, resume, zero-temperature limits, divergence, stop,
// the relativistic speed bound, optimizers and mass adaptation.
#include <gtest/gtest.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <limits>
#include <map>
#include <vector>

#include "credence/samplers.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

using testing::IndependentGaussian;
using Samples = std::map<int, std::vector<Eigen::VectorXf>>;

struct ChainRun {
  Samples samples;
  RunOutcome outcome;
  std::vector<TraceRow> traces;
};

// Runs chains on independent Gaussians of variance `var` (gradient-noise variance
// `noise`, seeded per chain) and collects every kept sample.
ChainRun run(const SamplerSettings& s, ChainSettings c, Eigen::Index p, float var = 1,
             double noise = 0, const std::atomic<bool>* stop = nullptr,
             const std::vector<ChainCheckpoint>& resume = {},
             std::function<void(const TraceRow&)> on_trace = {}) {
  ChainRun result;
  ChainHooks hooks;
  hooks.on_sample = [&](const KeptSample& k) { result.samples[k.chain].push_back(k.theta); };
  hooks.on_trace = [&](const TraceRow& row) {
    result.traces.push_back(row);
    if (on_trace) on_trace(row);
  };
  auto factory = [&](int chain) {
    return std::make_unique<IndependentGaussian>(Eigen::VectorXf::Constant(p, var), noise,
                                                 100 + static_cast<std::uint64_t>(chain));
  };
  auto init = [](int chain, ThetaRef theta) {
    theta.setConstant(0.5f + 0.1f * static_cast<float>(chain));
    return Status::ok_status();
  };
  Result<RunOutcome> outcome =
      run_chains(s, c, p, factory, init, hooks, RunControl{.stop = stop}, resume);
  EXPECT_TRUE(outcome.ok()) << outcome.status().to_string();
  if (outcome.ok()) result.outcome = *outcome;
  return result;
}

// Mean of the traces' |v|/c over the steps from `burn_in` on; every row must record it
// (NaN when a row does not, which fails any comparison).
double mean_speed_ratio_after(const std::vector<TraceRow>& traces, std::int64_t burn_in) {
  double sum = 0;
  int n = 0;
  for (const TraceRow& row : traces) {
    if (!row.report.speed_ratio.has_value()) return std::nan("");
    if (row.step >= burn_in) sum += *row.report.speed_ratio, ++n;
  }
  return n > 0 ? sum / n : std::nan("");
}

SamplerSettings settings_for(Method method) {
  SamplerSettings s;
  s.method = method;
  s.step_size = method == Method::kSghmc || method == Method::kMomentum ? 0.01 : 0.1;
  if (method == Method::kAdam) s.step_size = 0.01;
  // santa's eta enters as sqrt(eta) g per step (docs/methods.md 16): 1e-3 moves about as far.
  if (method == Method::kSanta || method == Method::kSantaOpt) s.step_size = 1e-3;
  s.relativistic.mass = 1;
  s.relativistic.speed = 1;
  s.relativistic.friction = 1;
  s.hmc.leapfrog_steps = 5;
  return s;
}

const Method kAllMethods[] = {Method::kSgld, Method::kPsgld,    Method::kSghmc, Method::kRsghmc,
                              Method::kSgd,  Method::kMomentum, Method::kRsgd,  Method::kAdam,
                              Method::kHmc,  Method::kRhmc,     Method::kSanta, Method::kSantaOpt};

TEST(ChainDriver, SameSeedGivesTheSameIteratesWithOneAndTwoThreads) {
  ChainSettings c;
  c.chains = 3;
  c.burn_in = 20;
  c.thin = 3;
  c.samples = 30;
  c.seed = testing::test_seed(41);
  for (Method m : {Method::kSghmc, Method::kRhmc}) {
    c.threads = 1;
    ChainRun one = run(settings_for(m), c, 64, 1, 0.5);
    c.threads = 2;
    ChainRun two = run(settings_for(m), c, 64, 1, 0.5);
    ASSERT_EQ(one.samples.size(), 3u);
    for (int chain = 0; chain < 3; ++chain) {
      ASSERT_EQ(one.samples[chain].size(), 30u);
      for (std::size_t i = 0; i < 30; ++i) {
        EXPECT_EQ(one.samples[chain][i], two.samples[chain][i]) << method_name(m);
      }
    }
    EXPECT_NE(one.samples[0][5], one.samples[1][5]) << "chains must differ";
  }
}

TEST(ChainDriver, SaveAndRestoreMidChainContinuesBitForBit) {
  ChainSettings c;
  c.chains = 1;
  c.burn_in = 40;  // the stop falls inside burn-in for some methods' adaptation
  c.thin = 2;
  c.samples = 40;
  c.seed = testing::test_seed(42);
  for (Method m : kAllMethods) {
    SamplerSettings s = settings_for(m);
    s.relativistic.adapt_mass = true;
    s.relativistic.adapt_window = 10;
    ChainRun whole = run(s, c, 33, 1);
    for (std::int64_t stop_at : {25, 70}) {
      std::atomic<bool> stop{false};
      ChainRun first = run(s, c, 33, 1, 0, &stop, {}, [&](const TraceRow& row) {
        if (row.step == stop_at) stop = true;
      });
      ASSERT_EQ(first.outcome.chains[0].end, ChainEnd::kStopped);
      EXPECT_EQ(first.outcome.status.code(), StatusCode::kInterrupted);
      const ChainCheckpoint checkpoint = first.outcome.chains[0].checkpoint;
      EXPECT_EQ(checkpoint.next_step, stop_at + 1);
      ChainRun rest = run(s, c, 33, 1, 0, nullptr, {checkpoint});
      ASSERT_EQ(rest.outcome.chains[0].end, ChainEnd::kCompleted) << method_name(m);
      std::vector<Eigen::VectorXf> joined = first.samples[0];
      joined.insert(joined.end(), rest.samples[0].begin(), rest.samples[0].end());
      ASSERT_EQ(joined.size(), whole.samples[0].size()) << method_name(m);
      for (std::size_t i = 0; i < joined.size(); ++i) {
        ASSERT_EQ(joined[i], whole.samples[0][i])
            << method_name(m) << " sample " << i << " after a stop at " << stop_at;
      }
    }
  }
}

TEST(ChainDriver, ZeroTemperatureSamplersReproduceTheirOptimizersExactly) {
  // docs/methods.md 2, 4, 5.5, 7: sgld -> sgd, sghmc -> momentum, rsghmc -> rsgd, bit for bit
  // on the same (noisy) gradient sequence.
  ChainSettings c;
  c.chains = 2;
  c.burn_in = 0;
  c.thin = 1;
  c.samples = 200;
  c.seed = testing::test_seed(43);
  const std::pair<Method, Method> pairs[] = {{Method::kSgld, Method::kSgd},
                                             {Method::kSghmc, Method::kMomentum},
                                             {Method::kRsghmc, Method::kRsgd}};
  for (auto [sampler, optimizer] : pairs) {
    SamplerSettings cold = settings_for(sampler);
    cold.temperature = 0;
    SamplerSettings opt = settings_for(optimizer);
    ChainRun a = run(cold, c, 50, 1, 0.3);
    ChainRun b = run(opt, c, 50, 1, 0.3);
    for (int chain = 0; chain < 2; ++chain) {
      ASSERT_EQ(a.samples[chain].size(), 200u);
      for (std::size_t i = 0; i < 200; ++i) {
        ASSERT_EQ(a.samples[chain][i], b.samples[chain][i])
            << method_name(sampler) << " vs " << method_name(optimizer) << " step " << i;
      }
    }
  }
}

TEST(ChainDriver, DivergenceStopsOnlyThatChainAndIsReported) {
  // SGLD on a variance-1e-4 direction is unstable for eps >= 4e-4 (docs/methods.md 2);
  // chain 1 gets that target, chain 0 a benign one.
  for (Method m : {Method::kSgld, Method::kSghmc}) {
    SamplerSettings s = settings_for(m);
    s.step_size = 0.05;
    ChainSettings c;
    c.chains = 2;
    c.burn_in = 10;
    c.thin = 1;
    c.samples = 2000;
    c.seed = testing::test_seed(44);
    ChainHooks hooks;
    bool finite = true;
    hooks.on_sample = [&](const KeptSample& k) { finite = finite && k.theta.allFinite(); };
    auto factory = [](int chain) {
      return std::make_unique<IndependentGaussian>(
          Eigen::VectorXf::Constant(8, chain == 1 ? 1e-4f : 1.0f));
    };
    auto init = [](int, ThetaRef theta) {
      theta.setOnes();
      return Status::ok_status();
    };
    Result<RunOutcome> outcome = run_chains(s, c, 8, factory, init, hooks);
    ASSERT_TRUE(outcome.ok());
    const ChainOutcome& bad = outcome->chains[1];
    EXPECT_EQ(outcome->chains[0].end, ChainEnd::kCompleted);
    EXPECT_EQ(outcome->chains[0].kept, 2000);
    EXPECT_EQ(bad.end, ChainEnd::kDiverged) << method_name(m);
    EXPECT_LT(bad.step, 2010);
    EXPECT_NE(bad.reason.find("try a smaller step size"), std::string::npos) << bad.reason;
    EXPECT_EQ(outcome->status.code(), StatusCode::kDiverged);
    EXPECT_TRUE(finite) << "a non-finite theta reached a hook";
    EXPECT_TRUE(bad.checkpoint.theta.allFinite() || bad.reason.find("theta") != std::string::npos);
    std::printf("%s: %s\n", std::string(method_name(m)).c_str(), outcome->status.message().c_str());
  }
}

TEST(ChainDriver, WeightsPastTheRunFilesRangeEndTheChainBeforeTheyAreKept) {
  // U = -theta^2 / 2 (a variance of -1) pushes theta outwards by a constant factor per
  // step, while U falls, so the potential bound never fires. Between |theta| = 1.8e19 and
  // 3.4e38 theta is finite but its squared norm overflows a float, the type of the run
  // file's layer norms (readers then refuse the whole file). Such a sample must end the
  // chain as diverged, not be kept. Before this check, kept samples reached 1e38.
  SamplerSettings s = settings_for(Method::kSgld);
  s.step_size = 0.1;
  ChainSettings c;
  c.chains = 1;
  c.burn_in = 0;
  c.thin = 1;
  c.samples = 5000;
  c.seed = testing::test_seed(45);
  ChainHooks hooks;
  double largest = 0;
  int kept = 0;
  hooks.on_sample = [&](const KeptSample& k) {
    largest = std::max(largest, k.theta.cast<double>().squaredNorm());
    ++kept;
  };
  auto factory = [](int) {
    return std::make_unique<IndependentGaussian>(Eigen::VectorXf::Constant(4, -1.0f));
  };
  auto init = [](int, ThetaRef theta) {
    theta.setOnes();
    return Status::ok_status();
  };
  Result<RunOutcome> outcome = run_chains(s, c, 4, factory, init, hooks);
  ASSERT_TRUE(outcome.ok());
  const ChainOutcome& chain = outcome->chains[0];
  EXPECT_EQ(chain.end, ChainEnd::kDiverged);
  EXPECT_NE(chain.reason.find("past a float's range"), std::string::npos) << chain.reason;
  EXPECT_GT(kept, 100) << "the samples before the escape are kept";
  EXPECT_LT(largest, static_cast<double>(std::numeric_limits<float>::max()));
}

TEST(ChainDriver, RelativisticStepNeverExceedsEpsTimesC) {
  // docs/methods.md 5.1: |theta_{t+1,i} - theta_{t,i}| <= eps c_i, here with gradients of
  // order 1e8 (precision 1e8) and per-slice speeds. Float rounding of theta + eps v
  // may add half an ulp of theta.
  SamplerSettings s;
  s.method = Method::kRsghmc;
  s.step_size = 0.1;
  s.relativistic.mass = 1;
  s.relativistic.friction = 1;
  s.relativistic.adapt_mass = false;
  s.relativistic.slices = {{0, 10, 0, 0.5}, {10, 10, 0, 0.01}, {20, 12, 0, 3}};
  ChainSettings c;
  c.chains = 1;
  c.burn_in = 0;
  c.thin = 1;
  c.samples = 300;
  c.seed = testing::test_seed(45);
  ChainRun r = run(s, c, 32, 1e-8f, 1e10);
  ASSERT_EQ(r.outcome.chains[0].end, ChainEnd::kCompleted) << r.outcome.chains[0].reason;
  Eigen::VectorXf previous = Eigen::VectorXf::Constant(32, 0.5f);
  double worst = 0;
  for (const Eigen::VectorXf& theta : r.samples[0]) {
    for (Eigen::Index i = 0; i < 32; ++i) {
      // The engine's eps and c are float32: the bound is their product.
      const double c_i =
          static_cast<float>(i < 10 ? 0.5 : (i < 20 ? 0.01 : 3)) / 0.1 * static_cast<double>(0.1f);
      const double move = std::abs(static_cast<double>(theta[i]) - previous[i]);
      // One ulp of the larger endpoint covers the rounding of theta + eps v.
      const double slack = std::max(std::abs(theta[i]), std::abs(previous[i])) * 0x1p-23;
      worst = std::max(worst, move / (0.1 * c_i));
      ASSERT_LE(move, 0.1 * c_i + slack) << "coordinate " << i;
    }
    previous = theta;
  }
  std::printf("largest move / (eps c): %.7f\n", worst);
  EXPECT_GT(worst, 0.99);  // the bound is reached: the gradients are that large
}

TEST(ChainDriver, OptimizersReachTheMinimiserOfAConvexQuadratic) {
  // A 10-D quadratic with correlation 0.9 and scales 0.3..1; minimiser = its mean.
  const int d = 10;
  Eigen::VectorXd mean = Eigen::VectorXd::LinSpaced(d, -1, 2);
  Eigen::MatrixXd cov = testing::correlated_covariance(d, 0.9, 0.3);
  for (Method m : {Method::kSgd, Method::kMomentum, Method::kRsgd, Method::kAdam}) {
    SamplerSettings s;
    s.method = m;
    s.step_size = m == Method::kSgd ? 0.005 : (m == Method::kMomentum ? 0.002 : 0.01);
    if (m == Method::kRsgd) {
      s.step_size = 0.05;
      s.relativistic.mass = 1;
      s.relativistic.speed = 1;
      s.relativistic.friction = 20;
    }
    ChainSettings c;
    c.chains = 1;
    c.burn_in = 0;
    c.thin = 20000;
    c.samples = 1;
    Eigen::VectorXf last;
    ChainHooks hooks;
    hooks.on_sample = [&](const KeptSample& k) { last = k.theta; };
    auto factory = [&](int) { return std::make_unique<testing::ReplicatedGaussian>(mean, cov, 1); };
    Result<RunOutcome> outcome = run_chains(s, c, d, factory, {}, hooks);
    ASSERT_TRUE(outcome.ok());
    ASSERT_EQ(outcome->chains[0].end, ChainEnd::kCompleted) << method_name(m);
    const double error = (last.cast<double>() - mean).cwiseAbs().maxCoeff();
    std::printf("%-9s max |theta - argmin| = %.2e\n", std::string(method_name(m)).c_str(), error);
    EXPECT_LT(error, 1e-3) << method_name(m);
  }
}

TEST(ChainDriver, MassAdaptationReachesTheTargetSpeedAndIsRecorded) {
  // docs/methods.md 5.6: m adapts during burn-in until E|v|/c is within 0.1 of 0.5.
  SamplerSettings s;
  s.method = Method::kRsghmc;
  s.step_size = 0.05;
  s.relativistic.mass = 0.05;  // far too light: u = 0.05, E|v|/c ~ 0.96
  s.relativistic.speed = 1;
  s.relativistic.friction = 1;
  s.relativistic.adapt_window = 50;
  ChainSettings c;
  c.chains = 1;
  c.burn_in = 4000;
  c.thin = 1;
  c.samples = 1000;
  c.seed = testing::test_seed(46);
  ChainRun r = run(s, c, 2000, 1);
  ASSERT_EQ(r.outcome.chains[0].end, ChainEnd::kCompleted);
  const double ratio = mean_speed_ratio_after(r.traces, c.burn_in);
  const float mass = r.outcome.chains[0].checkpoint.state.floats.at("mass")[0];
  std::printf("after burn-in: mass %.4f, mean |v|/c %.4f\n", mass, ratio);
  EXPECT_NEAR(ratio, 0.5, 0.1);
  EXPECT_GT(mass, 0.2f);
}

TEST(ChainDriver, RhmcRecordsEachTrajectorysMeanSpeedRatio) {
  // docs/methods.md 5.3: every rhmc trace row carries the mean |v|/c over its trajectory's
  // drifts. On a standard normal target with small leapfrog steps the momenta stay near
  // their law exp(-K/T), so the trace's average must approach E|v|/c at u = m c^2 / T = 1:
  // exp(-u) / (u K_1(u)) = 0.611190 (the closed form and table of docs/methods.md 5.2;
  // K_1(1) = 0.6019072982 from Abramowitz and Stegun's table 9.8, from memory).
  SamplerSettings s;
  s.method = Method::kRhmc;
  s.step_size = 0.2;
  s.hmc.adapt_step = false;
  s.hmc.leapfrog_steps = 5;
  s.relativistic.mass = 1;
  s.relativistic.speed = 1;
  ChainSettings c;
  c.chains = 1;
  c.burn_in = 100;
  c.thin = 1;
  c.samples = 1500;
  c.seed = testing::test_seed(47);
  ChainRun r = run(s, c, 20, 1);
  ASSERT_EQ(r.outcome.chains[0].end, ChainEnd::kCompleted);
  for (const TraceRow& row : r.traces) {
    ASSERT_TRUE(row.report.speed_ratio.has_value()) << "step " << row.step;
    EXPECT_GT(*row.report.speed_ratio, 0);
    EXPECT_LE(*row.report.speed_ratio, 1);
  }
  const double ratio = mean_speed_ratio_after(r.traces, c.burn_in);
  std::printf("rhmc mean |v|/c after burn-in: %.4f (law: 0.611190)\n", ratio);
  EXPECT_NEAR(ratio, 0.611190, 0.02);
}

TEST(ChainDriver, CyclicalExplorationRunsTheZeroTemperatureLimitAndKeepsNothing) {
  // docs/methods.md 8: exploration steps are plain gradient steps (no noise) and are not
  // kept; sampling steps add noise. Traced with thin = 1 on U = |theta|^2 / 2.
  SamplerSettings s;
  s.method = Method::kSgld;
  s.step_size = 0.1;
  s.schedule.kind = ScheduleKind::kCyclical;
  s.schedule.cycles = 4;
  s.schedule.exploration_fraction = 0.5;
  ChainSettings c;
  c.chains = 1;
  c.burn_in = 0;
  c.thin = 1;
  c.samples = 80;
  c.seed = testing::test_seed(47);
  std::vector<std::int64_t> kept_steps;
  std::vector<double> potentials;
  ChainHooks hooks;
  hooks.on_sample = [&](const KeptSample& k) { kept_steps.push_back(k.step); };
  hooks.on_trace = [&](const TraceRow& row) { potentials.push_back(row.report.potential); };
  auto factory = [](int) {
    return std::make_unique<IndependentGaussian>(Eigen::VectorXf::Ones(16));
  };
  auto init = [](int, ThetaRef theta) {
    theta.setOnes();
    return Status::ok_status();
  };
  Result<RunOutcome> r = run_chains(s, c, 16, factory, init, hooks);
  ASSERT_TRUE(r.ok());
  // Cycle length 20: steps 0-9 of each cycle explore, 10-19 sample.
  ASSERT_EQ(kept_steps.size(), 40u);
  EXPECT_EQ(r->chains[0].kept, 40);
  for (std::int64_t step : kept_steps) EXPECT_GE(step % 20, 10) << step;
  // Exploration is noise-free gradient descent: theta_{t+1} = theta_t (1 - eps_t / 2),
  // so U_t = 16 theta_t^2 / 2 follows the deterministic product up to step 10.
  StepSchedule schedule(s.schedule, 0.1, 80);
  double theta = 1;
  for (int t = 0; t <= 10; ++t) {
    EXPECT_NEAR(potentials[static_cast<std::size_t>(t)], 8 * theta * theta, 1e-5) << t;
    theta *= 1 - schedule.step_size(t) / 2;
  }
  // The first sampling step (t = 10) injects noise.
  EXPECT_GT(std::abs(potentials[11] - 8 * theta * theta), 1e-3);
}

// The example of samplers_potential.h, copied verbatim: it must compile and sample.
class Quadratic : public credence::PotentialFn {
 public:
  explicit Quadratic(float s) : precision_(1.0f / (s * s)) {}
  std::int64_t rows() const override { return 1; }
  credence::Status minibatch(credence::ConstThetaRef theta, credence::ThetaRef grad,
                             credence::MinibatchValue& out) override {
    grad = precision_ * theta;  // overwrite, never +=
    out.potential = 0.5 * precision_ * theta.squaredNorm();
    return credence::Status::ok_status();
  }
  credence::Status full(credence::ConstThetaRef theta, credence::ThetaRef grad,
                        double& potential) override {
    credence::MinibatchValue value;
    CREDENCE_RETURN_IF_ERROR(minibatch(theta, grad, value));
    potential = value.potential;
    return credence::Status::ok_status();
  }

 private:
  float precision_;
};

TEST(ChainDriver, TheHeaderExamplePotentialSamples) {
  auto factory = [](int /*chain*/) { return std::make_unique<Quadratic>(2.0f); };
  SamplerSettings s;
  s.method = Method::kRhmc;
  s.step_size = 0.5;
  s.relativistic.mass = 1;
  s.relativistic.speed = 2;
  ChainSettings c;
  c.chains = 2;
  c.burn_in = 200;
  c.thin = 1;
  c.samples = 3000;
  c.seed = testing::test_seed(48);
  double sum2 = 0, n = 0;
  ChainHooks hooks;
  hooks.on_sample = [&](const KeptSample& k) {
    sum2 += k.theta.cast<double>().squaredNorm() / 3;
    ++n;
  };
  Result<RunOutcome> r = run_chains(s, c, 3, factory, {}, hooks);
  ASSERT_TRUE(r.ok() && r->status.ok());
  // Target N(0, 4 I): 18000 draws, correlated; 10% is several standard errors.
  EXPECT_NEAR(sum2 / n, 4.0, 0.4);
}

TEST(ChainDriver, AFailingPotentialStopsItsChainWithItsOwnStatus) {
  class Broken : public IndependentGaussian {
   public:
    Broken() : IndependentGaussian(Eigen::VectorXf::Ones(2)) {}
    Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) override {
      if (++calls_ == 5) return Status::invalid_input("batch of 9 rows exceeds the workspace");
      return IndependentGaussian::minibatch(theta, grad, out);
    }

   private:
    int calls_ = 0;
  };
  ChainSettings c;
  c.chains = 1;
  auto factory = [](int) { return std::make_unique<Broken>(); };
  Result<RunOutcome> r = run_chains(SamplerSettings(), c, 2, factory, {}, {});
  ASSERT_TRUE(r.ok());
  EXPECT_EQ(r->chains[0].end, ChainEnd::kFailed);
  EXPECT_EQ(r->chains[0].step, 4);
  EXPECT_EQ(r->status.code(), StatusCode::kInvalidInput);
  EXPECT_EQ(r->status.message(), "chain 0: batch of 9 rows exceeds the workspace");
}

TEST(ChainDriver, InvalidLayoutIsRejectedWithAMessage) {
  ChainSettings c;
  c.thin = 0;
  auto factory = [](int) {
    return std::make_unique<IndependentGaussian>(Eigen::VectorXf::Ones(2));
  };
  Result<RunOutcome> outcome = run_chains(SamplerSettings(), c, 2, factory, {}, {});
  ASSERT_FALSE(outcome.ok());
  EXPECT_NE(outcome.status().message().find("thin >= 1"), std::string::npos);
}

}  // namespace
}  // namespace credence
