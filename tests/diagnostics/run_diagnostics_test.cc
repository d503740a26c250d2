// diagnose_run on run files written with RunWriter from known draws: grouping by chain and
// kept order, burn-in excluded from the trace, the verdict, projections kept out of it,
// cut lengths, the speed-ratio note and an empty run. Expected values come from
// diagnose_scalar on the same draws (itself checked against numpy in
// numpy_agreement_test) or by construction.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "credence/run_diagnostics.h"
#include "ensemble/test_runs.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

constexpr std::int64_t kBurnIn = 100;

struct Plan {
  std::string method = "sgld";
  std::vector<std::int64_t> kept;  // per chain
  double log_lik_shift = 0;        // added to chain 0's probe_log_lik
};

// Draws: probe_log_lik, probe_prob, layer norms iid normal; projections offset by 10 x
// chain (chains "in different modes"); trace rows every 10 steps from step 5, those up to
// kBurnIn carrying a potential of 1e6 and speed ratio 0.1, later ones N(0,1) and 0.9.
struct Written {
  std::string path;
  Chains log_lik;  // what was stored, by chain in kept order
};

Written write_run(const testing::TempDir& dir, const Plan& plan, std::mt19937_64& rng) {
  const int chains = static_cast<int>(plan.kept.size());
  RunHeader header = testing::make_header(chains, 12);
  header.settings = {{"method", plan.method}, {"burn_in", kBurnIn}, {"thin", std::int64_t{3}}};
  Written out;
  out.path = (dir.path() / (plan.method + std::to_string(chains) + ".h5")).string();
  out.log_lik.resize(static_cast<std::size_t>(chains));
  auto writer = RunWriter::create(out.path, header, true);
  EXPECT_TRUE(writer.ok()) << writer.status().to_string();
  std::normal_distribution<double> normal;
  std::vector<float> theta(12, 0.5f), prob(header.probe_rows.size()), proj(4), norms(2);
  const std::int64_t longest = *std::max_element(plan.kept.begin(), plan.kept.end());
  for (std::int64_t k = 0; k < longest; ++k) {
    for (int c = chains - 1; c >= 0; --c) {  // chains interleaved, highest first
      if (k >= plan.kept[static_cast<std::size_t>(c)]) continue;
      for (float& p : prob) p = static_cast<float>(0.5 + 0.1 * normal(rng));
      for (std::size_t j = 0; j < proj.size(); ++j) proj[j] = static_cast<float>(10 * c + normal(rng));
      for (float& n : norms) n = static_cast<float>(5 + normal(rng));
      SampleRecord s;
      s.chain = c;
      s.step = kBurnIn + 3 * (k + 1);
      s.index = k;
      s.theta = theta;
      s.probe_log_lik = normal(rng) + (c == 0 ? plan.log_lik_shift : 0);
      out.log_lik[static_cast<std::size_t>(c)].push_back(s.probe_log_lik);
      s.probe_prob = prob;
      s.projections = proj;
      s.layer_sq_norms = norms;
      EXPECT_TRUE((*writer)->append_sample(s).ok());
      TraceRecord trace;
      trace.chain = c;
      trace.step = 10 * k + 5;
      const bool burning = trace.step <= kBurnIn;
      trace.potential = burning ? 1e6 : normal(rng);
      trace.speed_ratio = burning ? 0.1 : 0.9;
      EXPECT_TRUE((*writer)->append_trace(trace).ok());
      ChainState state = testing::state_after(header, c, k);
      state.theta = theta;
      EXPECT_TRUE((*writer)->set_chain_state(state).ok());
    }
  }
  EXPECT_TRUE((*writer)->finish(RunStatus::kComplete).ok());
  return out;
}

const SummaryDiagnostics& find(const RunDiagnostics& d, const std::string& name) {
  for (const SummaryDiagnostics& s : d.summaries) {
    if (s.name == name) return s;
  }
  ADD_FAILURE() << "no summary " << name;
  return d.summaries.front();
}

Result<RunDiagnostics> diagnose(const std::string& path) {
  auto reader = RunReader::open(path);
  if (!reader.ok()) return reader.status();
  return diagnose_run(**reader);
}

TEST(RunDiagnostics, IidSummariesAreMixedAndProjectionsStayOutOfTheVerdict) {
  testing::TempDir dir;
  std::mt19937_64 rng(testing::test_seed(17));
  const Written run = write_run(dir, {"sgld", {300, 300, 300, 300}, 0}, rng);
  Result<RunDiagnostics> d = diagnose(run.path);
  ASSERT_TRUE(d.ok()) << d.status().to_string();
  EXPECT_EQ(d->chains, 4);
  EXPECT_EQ(d->draws_per_chain, 300);
  EXPECT_EQ(d->thin, 3);
  EXPECT_EQ(d->ess_threshold, 400);  // 100 per chain, the 2021 paper
  EXPECT_EQ(d->verdict, MixingVerdict::kMixed) << "max R-hat " << d->max_rhat;
  EXPECT_EQ(d->flagged, 0);
  EXPECT_LT(d->max_rhat, kRhatThreshold);
  EXPECT_TRUE(d->speed_ratio_per_chain.empty()) << "sgld is not relativistic";

  // Grouping by chain and kept order: the same numbers as diagnose_scalar on the draws
  // as written.
  const ScalarDiagnostics direct = diagnose_scalar(run.log_lik);
  const SummaryDiagnostics& log_lik = find(*d, "probe_log_lik");
  EXPECT_DOUBLE_EQ(*log_lik.stats.rhat_bulk, *direct.rhat_bulk);
  EXPECT_DOUBLE_EQ(log_lik.stats.ess_bulk, direct.ess_bulk);
  EXPECT_TRUE(log_lik.in_verdict);

  // Projections differ between chains by 10 sd: R-hat is huge but not flagged.
  const SummaryDiagnostics& projection = find(*d, "projection[0]");
  EXPECT_FALSE(projection.in_verdict);
  EXPECT_GT(*projection.stats.rhat, 2);
  EXPECT_FALSE(projection.flag_rhat);

  // The potential trace: rows up to burn-in (10 per chain, value 1e6) are dropped.
  const SummaryDiagnostics& potential = find(*d, "potential");
  EXPECT_EQ(potential.stats.draws_per_chain, 300 - 10);
  EXPECT_LT(*potential.stats.rhat, 1.05);
  EXPECT_FALSE(potential.in_verdict);
}

TEST(RunDiagnostics, ShiftedChainIsFlaggedAndLengthsAreCut) {
  testing::TempDir dir;
  std::mt19937_64 rng(testing::test_seed(19));
  const Written run = write_run(dir, {"sgld", {300, 240, 300}, 1.0}, rng);
  Result<RunDiagnostics> d = diagnose(run.path);
  ASSERT_TRUE(d.ok()) << d.status().to_string();
  EXPECT_EQ(d->draws_per_chain, 240);
  bool cut = false;
  for (const std::string& note : d->notes) cut = cut || note.find("first 240") != std::string::npos;
  EXPECT_TRUE(cut);
  EXPECT_EQ(d->verdict, MixingVerdict::kNotMixed);
  EXPECT_TRUE(find(*d, "probe_log_lik").flag_rhat);
  EXPECT_GT(d->max_rhat, 1.1);  // one of three chains shifted by one sd
}

TEST(RunDiagnostics, RelativisticRunReadsSpeedRatioAfterBurnIn) {
  testing::TempDir dir;
  std::mt19937_64 rng(testing::test_seed(23));
  const Written run = write_run(dir, {"rsghmc", {120, 120}, 0}, rng);
  Result<RunDiagnostics> d = diagnose(run.path);
  ASSERT_TRUE(d.ok()) << d.status().to_string();
  ASSERT_EQ(d->speed_ratio_per_chain.size(), 2u);
  for (double r : d->speed_ratio_per_chain) EXPECT_NEAR(r, 0.9, 1e-12);  // burn-in rows (0.1) excluded
  EXPECT_NE(d->speed_note.find("raise the mass"), std::string::npos) << d->speed_note;
}

TEST(RunDiagnostics, OneChainHasEssButNoRhat) {
  testing::TempDir dir;
  std::mt19937_64 rng(testing::test_seed(29));
  const Written run = write_run(dir, {"sgld", {400}, 0}, rng);
  Result<RunDiagnostics> d = diagnose(run.path);
  ASSERT_TRUE(d.ok()) << d.status().to_string();
  EXPECT_EQ(d->verdict, MixingVerdict::kSingleChain);
  EXPECT_FALSE(find(*d, "probe_log_lik").stats.rhat.has_value());
  EXPECT_GT(find(*d, "probe_log_lik").stats.ess_bulk, 100);
}

TEST(RunDiagnostics, EmptyRunIsRefused) {
  testing::TempDir dir;
  const std::string path = (dir.path() / "empty.h5").string();
  auto writer = RunWriter::create(path, testing::make_header(2, 12), true);
  ASSERT_TRUE(writer.ok());
  ASSERT_TRUE((*writer)->finish(RunStatus::kInterrupted).ok());
  writer->reset();
  Result<RunDiagnostics> d = diagnose(path);
  ASSERT_FALSE(d.ok());
  EXPECT_EQ(d.status().code(), StatusCode::kInvalidInput);
  EXPECT_NE(d.status().message().find("no committed samples"), std::string::npos);
}

}  // namespace
}  // namespace credence
