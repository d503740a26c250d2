// judge_run on synthetic evidence: each check fails where it should and passes where it
// should. Expected numbers come from construction (a trend, a constant prediction, weights
// at a known fraction of the prior) or from diagnose_scalar on the same draws (itself
// checked against numpy in numpy_agreement_test). The thresholds are those of
// run_verdict.h: R-hat 1.01 and ESS 100 per chain from "Rank-normalization, folding, and
// localization: an improved R-hat for assessing convergence of MCMC" (Bayesian Analysis,
// 2021); the others are this project's (common practice, no source).
#include "credence/run_verdict.h"

#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "testing/seed.h"

namespace credence {
namespace {

Chains iid_chains(int chains, int draws, std::mt19937_64& rng, double mean = 0, double sd = 1) {
  std::normal_distribution<double> normal(mean, sd);
  Chains out(static_cast<std::size_t>(chains));
  for (auto& chain : out) {
    for (int i = 0; i < draws; ++i) chain.push_back(normal(rng));
  }
  return out;
}

// AR(1) chains x_t = phi x_{t-1} + e_t: slow mixing with phi near 1.
Chains ar_chains(int chains, int draws, double phi, std::mt19937_64& rng) {
  std::normal_distribution<double> normal;
  Chains out(static_cast<std::size_t>(chains));
  for (auto& chain : out) {
    double x = normal(rng) / std::sqrt(1 - phi * phi);
    for (int i = 0; i < draws; ++i) chain.push_back(x = phi * x + normal(rng));
  }
  return out;
}

// A mixed sampler run: 4 chains of 500 iid draws on every summary, a stationary potential,
// 6 probe rows of 2 classes whose probabilities vary between rows, 2 layers.
RunEvidence mixed_sampler(std::mt19937_64& rng) {
  RunEvidence e;
  e.method = "sghmc";
  e.chains = 4;
  e.thin = 2;
  e.potential = iid_chains(4, 1000, rng, 50, 3);
  e.probe_log_lik = iid_chains(4, 500, rng, -3, 1);
  for (int r = 0; r < 6; ++r) {
    e.probe_prob.push_back(iid_chains(4, 500, rng, 0.3 + 0.1 * r, 0.02));
    e.probe_labels.push_back(r % 2);
  }
  for (int l = 0; l < 2; ++l) e.layer_sq_norm.push_back(iid_chains(4, 500, rng, 10, 1));
  e.layer_weight_sq_norm = {9, 9};
  e.layer_prior_weight_sq_norm = {9, 9};
  return e;
}

CheckOutcome outcome(const RunVerdict& v, const char* name) {
  const VerdictCheck* c = v.find(name);
  EXPECT_NE(c, nullptr) << name;
  return c ? c->outcome : CheckOutcome::kNotApplied;
}

TEST(RunVerdict, MixedSamplerPassesEveryCheck) {
  std::mt19937_64 rng(testing::test_seed(1701));
  const RunVerdict v = judge_run(mixed_sampler(rng));
  ASSERT_EQ(v.checks.size(), 7u);
  for (const char* name : {"drift", "constant", "mixing", "predictions", "scale"}) {
    EXPECT_EQ(outcome(v, name), CheckOutcome::kPassed) << name << ": " << v.find(name)->message;
  }
  EXPECT_EQ(outcome(v, "pinned"), CheckOutcome::kNotApplied) << "pinned is for optimizers";
  EXPECT_EQ(outcome(v, "collapsed"), CheckOutcome::kNotApplied) << "collapsed is for optimizers";
  EXPECT_TRUE(v.done());
  EXPECT_EQ(v.headline, "passed every check");
  EXPECT_FALSE(v.more_steps_per_chain.has_value());
}

TEST(RunVerdict, FallingPotentialAfterBurnInIsDrift) {
  std::mt19937_64 rng(testing::test_seed(1702));
  RunEvidence e = mixed_sampler(rng);
  // Chain 2 still falls by 0.01 per row over 1000 rows: halves' means differ by about 5,
  // noise sd 3.
  for (std::size_t i = 0; i < e.potential[2].size(); ++i) e.potential[2][i] -= 0.01 * static_cast<double>(i);
  const RunVerdict v = judge_run(e);
  const VerdictCheck* drift = v.find("drift");
  ASSERT_EQ(drift->outcome, CheckOutcome::kFailed) << drift->message;
  EXPECT_GT(drift->value, kDriftZ);
  EXPECT_NE(drift->message.find("chain 2"), std::string::npos) << drift->message;
  EXPECT_NE(drift->message.find("fell"), std::string::npos) << drift->message;
  EXPECT_FALSE(v.done());
  EXPECT_EQ(v.headline.rfind("NOT done: drift", 0), 0u) << v.headline;
}

TEST(RunVerdict, NegligibleShiftOnALongTraceIsNotDrift) {
  std::mt19937_64 rng(testing::test_seed(1703));
  RunEvidence e = mixed_sampler(rng);
  // 40,000 iid rows, second half shifted by 0.1 sd: z is about 10, the shift is negligible.
  e.potential = iid_chains(1, 40000, rng);
  for (std::size_t i = 20000; i < 40000; ++i) e.potential[0][i] += 0.1;
  const RunVerdict drift_verdict = judge_run(e);  // outlives the pointer below
  const VerdictCheck* drift = drift_verdict.find("drift");
  EXPECT_GT(drift->value, kDriftZ) << "the z-score alone would flag it";
  EXPECT_EQ(drift->outcome, CheckOutcome::kPassed) << drift->message;
}

TEST(RunVerdict, ShortTraceLeavesDriftUnapplied) {
  std::mt19937_64 rng(testing::test_seed(1704));
  RunEvidence e = mixed_sampler(rng);
  e.potential = iid_chains(4, 2 * kDriftMinRowsPerHalf - 1, rng);
  const RunVerdict verdict = judge_run(e);
  EXPECT_EQ(verdict.find("drift")->outcome, CheckOutcome::kNotApplied);
}

TEST(RunVerdict, SamePredictionForEveryRowIsConstant) {
  std::mt19937_64 rng(testing::test_seed(1705));
  RunEvidence e = mixed_sampler(rng);
  // Every row predicted pi = (0.55, 0.30, 0.15) whatever its inputs: a row of class k
  // sees pi_k, up to noise 1e-3; the class means sum to 1.
  const double pi[3] = {0.55, 0.30, 0.15};
  e.probe_prob.clear();
  e.probe_labels.clear();
  for (int r = 0; r < 9; ++r) {
    e.probe_prob.push_back(iid_chains(4, 500, rng, pi[r % 3], 1e-3));
    e.probe_labels.push_back(r % 3);
  }
  const RunVerdict constant_verdict = judge_run(e);  // outlives the pointer below
  const VerdictCheck* constant = constant_verdict.find("constant");
  ASSERT_EQ(constant->outcome, CheckOutcome::kFailed) << constant->message;
  EXPECT_LT(constant->value, kConstantLogOddsSd);
  EXPECT_NE(constant->message.find("sum to 1.000"), std::string::npos) << constant->message;
}

TEST(RunVerdict, ConfidentRightPredictionsAreNotConstant) {
  std::mt19937_64 rng(testing::test_seed(1706));
  RunEvidence e = mixed_sampler(rng);
  // Every row gets 0.99 on its own label: equal within a class, but the class means sum
  // to 1.98, which no constant prediction can give.
  for (auto& row : e.probe_prob) row = iid_chains(4, 500, rng, 0.99, 1e-4);
  const RunVerdict constant_verdict = judge_run(e);  // outlives the pointer below
  const VerdictCheck* constant = constant_verdict.find("constant");
  EXPECT_LT(constant->value, kConstantLogOddsSd);
  EXPECT_EQ(constant->outcome, CheckOutcome::kPassed) << constant->message;
  e.probe_labels.clear();
  const RunVerdict verdict = judge_run(e);
  EXPECT_EQ(verdict.find("constant")->outcome, CheckOutcome::kNotApplied) << "labels unknown";
}

RunEvidence optimizer(double norm_fraction) {
  RunEvidence e;
  e.method = "adam";
  e.sampler = false;
  e.chains = 4;
  e.probe_log_lik = Chains(4, std::vector<double>{-2.0});
  for (int l = 0; l < 3; ++l) {
    // Layer 1's weights hold norm_fraction of their prior expectation; the others all of
    // it. The layer norms with biases (here at the prior's full scale) do not enter.
    const double prior = 20.0 * (l + 1);
    e.layer_sq_norm.push_back(Chains(4, std::vector<double>{prior + 5}));
    e.layer_weight_sq_norm.push_back(l == 1 ? norm_fraction * prior : prior);
    e.layer_prior_weight_sq_norm.push_back(prior);
  }
  return e;
}

// An optimizer with a learned prior scale: the second layer's weight precision is
// `fraction` of its cap (the fixed prior's precision, posterior/precision_evidence.h) and
// its squared weight norm `norm_fraction` of that prior's expectation; the other layers
// sit at a ninth of their cap (the updates' loose start). Values chosen by this test.
RunEvidence evidence_optimizer(double fraction, double norm_fraction) {
  RunEvidence e = optimizer(norm_fraction);
  for (int l = 0; l < 3; ++l) {
    const double cap = 8.0 * (l + 1);
    e.layer_weight_precision.push_back(l == 1 ? fraction * cap : cap / 9);
    e.layer_weight_precision_cap.push_back(cap);
  }
  return e;
}

TEST(RunVerdict, OptimizerCollapsedAtTheEvidenceCap) {
  // At the cap with weights at 0.03 of the prior's expectation: collapsed, though not
  // yet pinned (0.01).
  const RunVerdict at_cap = judge_run(evidence_optimizer(1.0, 0.03));
  const VerdictCheck* c = at_cap.find("collapsed");
  ASSERT_NE(c, nullptr);
  ASSERT_EQ(c->outcome, CheckOutcome::kFailed) << c->message;
  EXPECT_NEAR(c->value, 0.03, 1e-12);
  EXPECT_NE(c->message.find("layer 2's"), std::string::npos) << c->message;  // numbered from 1
  EXPECT_EQ(at_cap.headline, "NOT done: collapsed");
  // At the cap with weights of a healthy size (the demo table's adam): no alarm.
  const RunVerdict healthy = judge_run(evidence_optimizer(1.0, 0.5));
  EXPECT_EQ(healthy.find("collapsed")->outcome, CheckOutcome::kPassed) << healthy.find("collapsed")->message;
  // Small weights below the cap: the evidence does not ask for tighter, no alarm.
  const RunVerdict loose = judge_run(evidence_optimizer(0.5, 0.03));
  EXPECT_EQ(loose.find("collapsed")->outcome, CheckOutcome::kPassed) << loose.find("collapsed")->message;
  // A fixed prior scale (no learned precisions) and samplers: not applied.
  EXPECT_EQ(judge_run(optimizer(0.03)).find("collapsed")->outcome, CheckOutcome::kNotApplied);
  RunEvidence sampler = evidence_optimizer(1.0, 0.03);
  sampler.sampler = true;
  EXPECT_EQ(judge_run(sampler).find("collapsed")->outcome, CheckOutcome::kNotApplied);
}

// Probe rows of two classes whose ensemble probability of their own label is `own`: a
// constant prediction of (1/2, 1/2) at own = 0.5 (separation 0), certainty at 1.
void set_probes(RunEvidence& e, double own) {
  e.probe_prob.clear();
  e.probe_labels.clear();
  for (int r = 0; r < 8; ++r) {
    // Rows alternate a little around `own` so that each class's log-odds vary.
    e.probe_prob.push_back(Chains(4, std::vector<double>{own + (r % 4 < 2 ? 0.01 : -0.01)}));
    e.probe_labels.push_back(r % 2);
  }
}

TEST(RunVerdict, SmallWeightsAreNoAlarmWhilePredictionsSeparateTheClasses) {
  // A relu network keeps its function when one layer shrinks and the next grows, so a
  // small layer at the evidence cap is an alarm only while the predictions are nearly flat.
  // Separation here: (2 * own - 1) / (2 - 1), from construction.
  RunEvidence separating = evidence_optimizer(1.0, 0.03);
  set_probes(separating, 0.9);  // separation 0.8
  const RunVerdict fine = judge_run(separating);
  const VerdictCheck* c = fine.find("collapsed");
  ASSERT_EQ(c->outcome, CheckOutcome::kPassed) << c->message;
  EXPECT_NE(c->message.find("separation 0.80"), std::string::npos) << c->message;
  EXPECT_EQ(fine.headline, "passed every check");

  RunEvidence flat = evidence_optimizer(1.0, 0.03);
  set_probes(flat, 0.52);  // separation 0.04, below kSmallWeightsSeparation (0.05)
  EXPECT_EQ(judge_run(flat).find("collapsed")->outcome, CheckOutcome::kFailed);

  // Probe rows all of one class: the log-odds sd across them stands in. Rows at 0.6 and
  // 0.95 give log-odds 0.41 and 2.94, sd 1.35 by hand; all at 0.6 +- 0.01, sd 0.05.
  RunEvidence one_class = evidence_optimizer(1.0, 0.03);
  set_probes(one_class, 0.6);
  for (std::size_t r = 0; r < one_class.probe_labels.size(); ++r) {
    one_class.probe_labels[r] = 0;
    if (r % 2 == 1) one_class.probe_prob[r] = Chains(4, std::vector<double>{0.95});
  }
  const RunVerdict varied = judge_run(one_class);
  EXPECT_EQ(varied.find("collapsed")->outcome, CheckOutcome::kPassed)
      << varied.find("collapsed")->message;
  set_probes(one_class, 0.6);
  for (auto& label : one_class.probe_labels) label = 0;
  EXPECT_EQ(judge_run(one_class).find("collapsed")->outcome, CheckOutcome::kFailed);

  // The same gate on a fixed scale's pinned check.
  RunEvidence pinned = optimizer(1e-4);
  set_probes(pinned, 0.9);
  EXPECT_EQ(judge_run(pinned).find("pinned")->outcome, CheckOutcome::kPassed);
  set_probes(pinned, 0.52);
  EXPECT_EQ(judge_run(pinned).find("pinned")->outcome, CheckOutcome::kFailed);
}

TEST(RunVerdict, PinnedDoesNotJudgeALearnedScale) {
  // With a learned scale the fixed prior is only the evidence updates' cap; collapsed reads
  // that case, and "raise --prior-scale" would be no advice for it.
  const RunVerdict v = judge_run(evidence_optimizer(1.0, 1e-4));
  EXPECT_EQ(v.find("pinned")->outcome, CheckOutcome::kNotApplied);
  EXPECT_EQ(v.find("collapsed")->outcome, CheckOutcome::kFailed);
}

TEST(RunVerdict, OptimizerPinnedByThePrior) {
  const RunVerdict pinned = judge_run(optimizer(1e-4));
  const VerdictCheck* c = pinned.find("pinned");
  ASSERT_EQ(c->outcome, CheckOutcome::kFailed) << c->message;
  EXPECT_NEAR(c->value, 1e-4, 1e-12);
  EXPECT_NE(c->message.find("layer 2's"), std::string::npos) << c->message;  // numbered from 1
  EXPECT_EQ(judge_run(optimizer(0.5)).find("pinned")->outcome, CheckOutcome::kPassed);
  // Mixing and agreement are for samplers: not applied to an optimizer.
  for (const char* name : {"drift", "mixing", "predictions", "scale"}) {
    EXPECT_EQ(outcome(pinned, name), CheckOutcome::kNotApplied) << name;
  }
  RunEvidence unknown_prior = optimizer(1e-4);
  unknown_prior.layer_prior_weight_sq_norm.clear();
  EXPECT_EQ(judge_run(unknown_prior).find("pinned")->outcome, CheckOutcome::kNotApplied);
}

TEST(RunVerdict, SlowChainsAreNotMixedWithStepsToGo) {
  std::mt19937_64 rng(testing::test_seed(1707));
  RunEvidence e = mixed_sampler(rng);
  // One summary only, AR(1) with phi 0.97 on 4 x 200 draws: bulk-ESS far below 400.
  e.probe_log_lik = ar_chains(4, 200, 0.97, rng);
  e.probe_prob.clear();
  e.probe_labels.clear();
  e.layer_sq_norm.clear();
  e.thin = 5;
  const RunVerdict v = judge_run(e);
  const VerdictCheck* mixing = v.find("mixing");
  ASSERT_EQ(mixing->outcome, CheckOutcome::kFailed) << mixing->message;
  const double ess = diagnose_scalar(e.probe_log_lik).ess_bulk;
  EXPECT_DOUBLE_EQ(mixing->value, ess);
  EXPECT_EQ(mixing->threshold, 400);
  // 200 kept x thin 5 = 1000 steps per chain for `ess`: (400 - ess) / (ess / 1000) more.
  ASSERT_TRUE(v.more_steps_per_chain.has_value());
  EXPECT_EQ(*v.more_steps_per_chain, static_cast<std::int64_t>(std::ceil((400 - ess) * 1000 / ess)));
  EXPECT_NE(mixing->message.find(std::to_string(*v.more_steps_per_chain) + " more steps"), std::string::npos)
      << mixing->message;
  EXPECT_NE(v.headline.find("more steps per chain"), std::string::npos) << v.headline;
  EXPECT_EQ(mixing->message.find("rough"), std::string::npos) << "200 draws per chain are enough";

  // 40 draws per chain (20 per half-chain): the figure is marked rough.
  for (auto& chain : e.probe_log_lik) chain.resize(40);
  const RunVerdict few_verdict = judge_run(e);  // outlives the pointer below
  const VerdictCheck* few = few_verdict.find("mixing");
  ASSERT_EQ(few->outcome, CheckOutcome::kFailed);
  EXPECT_NE(few->message.find("a rough figure: 40 kept samples per chain"), std::string::npos) << few->message;
}

TEST(RunVerdict, TooFewKeptSamplesFailMixing) {
  std::mt19937_64 rng(testing::test_seed(1708));
  RunEvidence e = mixed_sampler(rng);
  e.probe_log_lik = iid_chains(4, 3, rng);
  const RunVerdict verdict = judge_run(e);
  EXPECT_EQ(verdict.find("mixing")->outcome, CheckOutcome::kFailed);
}

TEST(RunVerdict, PredictionAgreementIsSeparateFromWeightScale) {
  std::mt19937_64 rng(testing::test_seed(1709));
  // Chains predict alike but chain 0 sits at a larger weight scale: only "scale" fails.
  RunEvidence scale_off = mixed_sampler(rng);
  for (double& v : scale_off.layer_sq_norm[1][0]) v += 3;
  RunVerdict v = judge_run(scale_off);
  EXPECT_EQ(outcome(v, "predictions"), CheckOutcome::kPassed) << v.find("predictions")->message;
  ASSERT_EQ(outcome(v, "scale"), CheckOutcome::kFailed);
  EXPECT_GT(v.find("scale")->value, kRhatThreshold);
  EXPECT_NE(v.find("scale")->message.find("layer_sq_norm[1]"), std::string::npos) << v.find("scale")->message;

  // And the reverse: one probe row's probability differs in chain 3.
  RunEvidence predictions_off = mixed_sampler(rng);
  for (double& p : predictions_off.probe_prob[4][3]) p += 0.1;
  v = judge_run(predictions_off);
  EXPECT_EQ(outcome(v, "scale"), CheckOutcome::kPassed);
  ASSERT_EQ(outcome(v, "predictions"), CheckOutcome::kFailed);
  EXPECT_NE(v.find("predictions")->message.find("probe_prob[4]"), std::string::npos);

  // One chain: R-hat does not apply.
  RunEvidence one = mixed_sampler(rng);
  one.chains = 1;
  for (Chains* c : {&one.probe_log_lik, &one.layer_sq_norm[0], &one.layer_sq_norm[1]}) c->resize(1);
  for (Chains& c : one.probe_prob) c.resize(1);
  EXPECT_EQ(judge_run(one).find("predictions")->outcome, CheckOutcome::kNotApplied);
}

TEST(RunVerdict, LinesListFailedChecksUnderTheHeadline) {
  const RunEvidence e = optimizer(1e-4);
  const std::vector<std::string> lines = verdict_lines(judge_run(e));
  ASSERT_EQ(lines.size(), 2u);
  EXPECT_EQ(lines[0], "NOT done: pinned");
  EXPECT_EQ(lines[1].rfind("  pinned [FAILED]: ", 0), 0u) << lines[1];
  EXPECT_EQ(verdict_lines(judge_run(e), true).size(), 8u);
}

}  // namespace
}  // namespace credence
