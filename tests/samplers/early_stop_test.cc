// Early stopping of optimizer chains (samplers.h, EarlyStopSettings): on a table where
// adam overfits (labels that are pure noise given the inputs, few rows, a wide hidden
// layer), the held-out NLL falls and then rises; the chain must stop before its budget,
// keep the iterate with the lowest held-out NLL it scored, and say so. A chain stopped
// mid-run and resumed from its checkpoint must end exactly as an uninterrupted one.
#include <gtest/gtest.h>

#include <atomic>
#include <cstring>
#include <random>
#include <vector>

#include "credence/samplers.h"
#include "credence/table_potential.h"
#include "testing/seed.h"

namespace credence {
namespace {

struct Table {
  TrainingRows train, held_out;
  ParamLayout layout;
  PriorSpec prior;
};

// 40 training and 200 held-out rows, 10 inputs, 2 classes; the label follows the first
// input weakly (logit 1.5 x0) so there is something to learn before the noise is fitted.
Table make_table(std::uint64_t seed) {
  Table t;
  std::mt19937_64 engine(seed);
  std::normal_distribution<float> normal(0.0f, 1.0f);
  std::uniform_real_distribution<float> uniform(0.0f, 1.0f);
  auto fill = [&](TrainingRows& rows, Index n) {
    rows.x.resize(10, n);
    for (Index i = 0; i < n; ++i) {
      for (Index j = 0; j < 10; ++j) rows.x(j, i) = normal(engine);
      const float p = 1.0f / (1.0f + std::exp(-1.5f * rows.x(0, i)));
      rows.labels.push_back(uniform(engine) < p ? 1 : 0);
    }
  };
  fill(t.train, 40);
  fill(t.held_out, 200);
  PriorSpec wide;
  wide.weight_scale = 30;  // a prior too wide to hold the network back: it overfits
  Result<NetSpec> spec = net_spec_from_options(std::vector<Index>{64}, "tanh", wide);
  EXPECT_TRUE(spec.ok());
  t.prior = spec->prior;
  Result<ParamLayout> layout = resolve_layout(*spec, 10, 2);
  EXPECT_TRUE(layout.ok());
  t.layout = *layout;
  return t;
}

// Mean NLL of the held-out rows (a fresh workspace per call: tests only).
double held_out_nll(const Table& t, ConstThetaRef theta) {
  Network<float> net(t.layout);
  Workspace<float> ws(t.layout, t.held_out.x.cols());
  EXPECT_TRUE(net.forward(ws, theta, t.held_out.x).ok());
  Eigen::VectorXf log_lik(t.held_out.x.cols());
  Result<double> sum = net.log_likelihood(log_lik, ws, t.held_out.labels);
  EXPECT_TRUE(sum.ok());
  return -*sum / static_cast<double>(t.held_out.x.cols());
}

struct Outcome {
  std::vector<KeptSample> kept;  // theta copied into `thetas`
  std::vector<Eigen::VectorXf> thetas;
  std::vector<ChainCheckpoint> checkpoints;
  std::vector<double> scores;  // every held-out score, in order
  RunOutcome run;
};

constexpr std::int64_t kBudget = 3000;

ChainSettings layout(bool early) {
  ChainSettings c;
  c.chains = 1;
  c.threads = 1;
  c.burn_in = kBudget - 1;  // the optimizer layout: one kept iterate
  c.thin = 1;
  c.samples = 1;
  c.seed = testing::test_seed(170);
  if (early) {
    c.early_stop.every = 20;
    c.early_stop.patience = 10;
    c.early_stop.min_steps = 100;
  }
  return c;
}

Outcome run(const Table& t, ChainSettings chains, const RunControl& control = {},
            const std::vector<ChainCheckpoint>& resume = {}, std::int64_t stop_after = -1,
            std::atomic<bool>* stop = nullptr) {
  Outcome out;
  if (chains.early_stop.every > 0) {
    chains.early_stop.scorer = [&t, &out](int) -> HeldOutScore {
      return [&t, &out](ConstThetaRef theta) -> Result<double> {
        out.scores.push_back(held_out_nll(t, theta));
        return out.scores.back();
      };
    };
  }
  ChainHooks hooks;
  hooks.on_trace = [&](const TraceRow& row) {
    if (stop != nullptr && row.step == stop_after) *stop = true;
  };
  hooks.on_sample = [&](const KeptSample& k) {
    out.kept.push_back(k);
    out.thetas.emplace_back(k.theta);
  };
  hooks.on_checkpoint = [&](const ChainCheckpoint& c) { out.checkpoints.push_back(c); };
  SamplerSettings settings;
  settings.method = Method::kAdam;
  settings.learning_rate = 0.02;
  auto factory = [&](int) -> std::unique_ptr<PotentialFn> {
    auto potential = TablePotential::create(t.train, t.layout, t.prior, {}, {.batch_rows = 40}, 5);
    EXPECT_TRUE(potential.ok());
    return std::move(*potential);
  };
  auto init = [&](int, ThetaRef theta) {
    initialize_params<float>(theta, t.layout, 9);
    return Status::ok_status();
  };
  Result<RunOutcome> outcome =
      run_chains(settings, chains, t.layout.num_params, factory, init, hooks, control, resume);
  EXPECT_TRUE(outcome.ok()) << outcome.status().message();
  if (outcome.ok()) out.run = *outcome;
  return out;
}

TEST(EarlyStop, StopsOnAnOverfittingTableAndKeepsTheBestIterate) {
  const Table t = make_table(testing::test_seed(171));
  const Outcome full = run(t, layout(false));
  const Outcome early = run(t, layout(true));
  ASSERT_EQ(full.kept.size(), 1u);
  ASSERT_EQ(early.kept.size(), 1u);
  ASSERT_TRUE(early.run.status.ok()) << early.run.status.message();
  EXPECT_EQ(early.run.chains[0].end, ChainEnd::kCompleted);

  // Stopped well before the budget, and said so.
  EXPECT_LT(early.kept[0].step, kBudget / 2);
  EXPECT_EQ(early.run.chains[0].reason.rfind("stopped early after step", 0), 0u)
      << early.run.chains[0].reason;
  EXPECT_EQ(early.run.chains[0].checkpoint.reason, early.run.chains[0].reason);
  // It scored every 20 steps and kept the lowest score it saw.
  double lowest = 1e300;
  for (double score : early.scores) lowest = std::min(lowest, score);
  const double kept_score = held_out_nll(t, early.thetas[0]);
  EXPECT_DOUBLE_EQ(kept_score, lowest);
  EXPECT_EQ((early.kept[0].step + 1) % 20, 0);
  // The table overfits: the last iterate of the whole budget is clearly worse on the
  // held-out rows than the kept one (a margin of 0.05 nats per row, common practice).
  const double last_score = held_out_nll(t, full.thetas[0]);
  EXPECT_GT(last_score, kept_score + 0.05) << "kept " << kept_score << ", last " << last_score;
  // The final checkpoint says the chain is done: nothing runs on resume.
  EXPECT_EQ(early.run.chains[0].checkpoint.next_step, kBudget);
  EXPECT_EQ(early.run.chains[0].checkpoint.kept, 1);
}

bool same_bits(const Eigen::VectorXf& a, const Eigen::VectorXf& b) {
  return a.size() == b.size() &&
         std::memcmp(a.data(), b.data(), sizeof(float) * static_cast<std::size_t>(a.size())) == 0;
}

TEST(EarlyStop, AResumedChainStopsAndKeepsExactlyAsAnUninterruptedOne) {
  const Table t = make_table(testing::test_seed(171));
  const Outcome whole = run(t, layout(true));
  ASSERT_EQ(whole.kept.size(), 1u);
  const std::int64_t best = whole.kept[0].step;
  // Stop once after the best step was scored (best state non-trivial) and once before.
  for (std::int64_t stop_after : {best + 30, best / 2}) {
    std::atomic<bool> stop{false};
    const Outcome first = run(t, layout(true), {.stop = &stop}, {}, stop_after, &stop);
    ASSERT_EQ(first.run.chains[0].end, ChainEnd::kStopped) << stop_after;
    ASSERT_TRUE(first.kept.empty());
    const ChainCheckpoint& last = first.run.chains[0].checkpoint;
    ASSERT_EQ(last.state.floats.count(std::string(kEarlyStopStatePrefix) + "best_theta"), 1u);
    const Outcome rest = run(t, layout(true), {}, {last});
    ASSERT_EQ(rest.kept.size(), 1u) << stop_after;
    EXPECT_EQ(rest.kept[0].step, best) << stop_after;
    EXPECT_TRUE(same_bits(rest.thetas[0], whole.thetas[0])) << stop_after;
    EXPECT_EQ(rest.run.chains[0].reason, whole.run.chains[0].reason) << stop_after;
    // Resuming the finished chain runs nothing and keeps nothing more.
    const Outcome again = run(t, layout(true), {}, {rest.run.chains[0].checkpoint});
    EXPECT_TRUE(again.kept.empty());
    EXPECT_EQ(again.run.chains[0].end, ChainEnd::kCompleted);
  }
}

TEST(EarlyStop, RefusesASamplerLayoutAndAMissingScorer) {
  const Table t = make_table(testing::test_seed(171));
  ChainSettings c = layout(true);
  c.thin = 10;
  c.samples = 5;
  c.early_stop.scorer = [](int) -> HeldOutScore { return [](ConstThetaRef) { return 0.0; }; };
  auto factory = [&](int) -> std::unique_ptr<PotentialFn> {
    return std::move(*TablePotential::create(t.train, t.layout, t.prior, {}, {.batch_rows = 40}, 5));
  };
  EXPECT_EQ(run_chains(SamplerSettings{}, c, t.layout.num_params, factory, {}, {}).status().code(),
            StatusCode::kInvalidInput);
  ChainSettings no_scorer = layout(true);
  EXPECT_EQ(run_chains(SamplerSettings{}, no_scorer, t.layout.num_params, factory, {}, {})
                .status()
                .code(),
            StatusCode::kInvalidInput);
}

}  // namespace
}  // namespace credence
