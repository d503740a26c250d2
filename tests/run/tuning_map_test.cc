// The tuning map's grid parsing and refusals, its per-cell measures from diagnostics, the
// chosen-cell rule and the CSV columns (tuning_map.h). The end-to-end numbers are checked
// against h5py and numpy in tests/cli/sweep_map_test.cc.
#include "credence/tuning_map.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>

namespace credence {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

TEST(TuningGrid, ParsesListsAndLogRanges) {
  Result<TuningGrid> grid = parse_tuning_grid("0.1,1,10", "0.003,0.03", "", {Method::kRsghmc});
  ASSERT_TRUE(grid.ok()) << grid.status().message();
  EXPECT_EQ(grid->axis, TuningAxis::kMaxMove);
  EXPECT_EQ(grid->masses, (std::vector<double>{0.1, 1, 10}));
  EXPECT_EQ(grid->values, (std::vector<double>{0.003, 0.03}));
  // A log range: 1e-2, 1e-1, 1 (evenly spaced in log10; arithmetic, no outside source).
  Result<std::vector<double>> range = parse_positive_values("0.01:1:3", "--masses");
  ASSERT_TRUE(range.ok());
  ASSERT_EQ(range->size(), 3u);
  EXPECT_NEAR((*range)[1], 0.1, 1e-15);
  EXPECT_NEAR((*range)[2], 1.0, 1e-15);
  Result<TuningGrid> by_step = parse_tuning_grid("1", "", "0.01,0.1", {Method::kRsghmc});
  ASSERT_TRUE(by_step.ok());
  EXPECT_EQ(by_step->axis, TuningAxis::kStepSize);
  EXPECT_EQ(tuning_axis_name(by_step->axis), "learning_rate");
  // rhmc reads a rest mass and a max move too (docs/methods.md 5.3), alone or beside rsghmc.
  Result<TuningGrid> both = parse_tuning_grid("1", "0.01", "", {Method::kRsghmc, Method::kRhmc});
  ASSERT_TRUE(both.ok()) << both.status().message();
  EXPECT_EQ(both->methods, (std::vector<Method>{Method::kRsghmc, Method::kRhmc}));
}

TEST(TuningGrid, RefusesWhatItCannotMap) {
  struct Case {
    std::string masses, moves, steps;
    std::vector<Method> methods;
    std::string says;
  };
  const std::vector<Case> cases = {
      {"1", "0.01", "", {Method::kSghmc}, "sghmc reads neither"},
      {"1", "0.01", "", {Method::kRsghmc, Method::kSgld}, "sgld reads neither"},
      {"1", "0.01", "", {Method::kRsgd}, "rsgd is an optimizer"},
      {"1", "0.01", "", {Method::kHmc}, "hmc reads neither: give --methods rhmc"},
      {"", "0.01", "", {Method::kRsghmc}, "give --masses too"},
      {"1", "", "", {Method::kRsghmc}, "needs a second axis"},
      {"1", "0.01", "0.1", {Method::kRsghmc}, "not both"},
      {"0,1", "0.01", "", {Method::kRsghmc}, "--masses '0,1'"},
      {"1,", "0.01", "", {Method::kRsghmc}, "--masses '1,'"},
      {"1", "0.01,nan", "", {Method::kRsghmc}, "--max-moves"},
      {"1", "1:0.1:3", "", {Method::kRsghmc}, "--max-moves '1:0.1:3'"},
      // Would name the same run file twice (4 significant digits name the cells).
      {"1,0.10001,0.1", "0.01", "", {Method::kRsghmc}, "--masses: 0.10001 and 0.1"},
      {"1", "0.01,0.01", "", {Method::kRsghmc}, "the same to 4 significant digits"},
  };
  for (const Case& c : cases) {
    Result<TuningGrid> grid = parse_tuning_grid(c.masses, c.moves, c.steps, c.methods);
    ASSERT_FALSE(grid.ok()) << c.says;
    EXPECT_EQ(grid.status().code(), StatusCode::kInvalidInput);
    EXPECT_NE(grid.status().message().find(c.says), std::string::npos) << grid.status().message();
  }
}

RunDiagnostics diagnostics_with(double ess, double ess_per_1000, std::vector<double> speeds) {
  RunDiagnostics d;
  SummaryDiagnostics layer;
  layer.group = SummaryGroup::kLayerSqNorm;
  layer.stats.ess_bulk = 999;  // must not be taken: the map reads the probe log-likelihood
  layer.ess_per_1000_grads = 999;
  d.summaries.push_back(layer);
  SummaryDiagnostics probe;
  probe.group = SummaryGroup::kProbeLogLik;
  probe.stats.ess_bulk = ess;
  probe.ess_per_1000_grads = ess_per_1000;
  d.summaries.push_back(probe);
  d.speed_ratio_per_chain = std::move(speeds);
  return d;
}

TEST(TuningMeasures, ReadsTheProbeLogLikelihoodAndAveragesSpeedOverChains) {
  // 40 effective draws over 8000 gradients is 5 per 1000 (arithmetic).
  const TuningMeasures m = tuning_measures(diagnostics_with(40, 5, {0.4, kNaN, 0.6}), 0.3,
                                           {ChainStatus::kCompleted, ChainStatus::kDiverged});
  EXPECT_EQ(m.ess_bulk, 40);
  EXPECT_EQ(m.ess_per_1000_grads, 5);
  EXPECT_EQ(m.gradient_evals, 8000);
  EXPECT_NEAR(m.speed_ratio, 0.5, 1e-15);  // a chain without a recorded ratio is left out
  EXPECT_EQ(m.test_nll, 0.3);
  EXPECT_EQ(m.diverged_chains, 1);
  EXPECT_EQ(m.chains, 2);
  EXPECT_TRUE(std::isnan(m.passes));      // no pass size given
  EXPECT_TRUE(std::isnan(m.acceptance));  // no Metropolis test recorded
  // rsghmc at 16 minibatch gradients per pass: 8000 gradients are 500 passes, and 40
  // effective draws are 80 per 1000 passes (arithmetic).
  const TuningMeasures by_pass =
      tuning_measures(diagnostics_with(40, 5, {0.5}), 0.3, {ChainStatus::kCompleted}, 16);
  EXPECT_EQ(by_pass.passes, 500);
  EXPECT_EQ(by_pass.ess_per_1000_passes, 80);
  // rhmc: one gradient is one pass, and its acceptance is averaged over chains.
  RunDiagnostics full = diagnostics_with(40, 5, {0.5, 0.7});
  full.acceptance_per_chain = {0.6, kNaN, 0.8};
  const TuningMeasures rhmc = tuning_measures(full, 0.3, {ChainStatus::kCompleted}, 1);
  EXPECT_EQ(rhmc.passes, 8000);
  EXPECT_EQ(rhmc.ess_per_1000_passes, 5);
  EXPECT_NEAR(rhmc.acceptance, 0.7, 1e-15);
  const TuningMeasures none = tuning_measures(std::nullopt, kNaN, {ChainStatus::kDiverged});
  EXPECT_TRUE(std::isnan(none.ess_per_1000_grads));
  EXPECT_TRUE(std::isnan(none.speed_ratio));
  EXPECT_EQ(none.diverged_chains, 1);
}

TuningCell cell(double mass, double ess_rate, double nll, int diverged) {
  TuningCell c;
  c.mass = mass;
  c.value = 0.01;
  c.trained = true;
  c.measures.ess_per_1000_grads = ess_rate;
  c.measures.test_nll = nll;
  c.measures.diverged_chains = diverged;
  c.measures.chains = 2;
  c.measures.speed_ratio = kNaN;
  c.run_file = "cell.h5";
  return c;
}

TEST(TuningChoice, FastButWorsePredictingCellsAreNotChosen) {
  // 0.305 is within 0.01 of the best 0.3; 0.32 is not, however fast it mixes.
  std::vector<TuningCell> cells = {cell(1, 50, 0.32, 0), cell(2, 3, 0.3, 0), cell(3, 5, 0.305, 0)};
  EXPECT_EQ(choose_tuning_cell(cells, Method::kRsghmc), 2u);
  cells[1].measures.diverged_chains = 1;  // the best NLL no longer counts: 0.305 is the bar
  EXPECT_EQ(choose_tuning_cell(cells, Method::kRsghmc), 2u);
  cells[2].measures.test_nll = 0.33;  // now 0.32 is the best that qualifies
  EXPECT_EQ(choose_tuning_cell(cells, Method::kRsghmc), 0u);
}

TEST(TuningChoice, HighestEssRateWithoutDivergenceTiesToLowerNll) {
  std::vector<TuningCell> cells = {cell(0.1, 9, 0.5, 1),   // fastest, but a chain diverged
                                   cell(1, 4, 0.4, 0), cell(10, 4, 0.3, 0), cell(100, kNaN, 0.1, 0)};
  EXPECT_EQ(choose_tuning_cell(cells, Method::kRsghmc), 2u);
  EXPECT_FALSE(choose_tuning_cell(cells, Method::kSghmc).has_value());
  cells[3].trained = false;
  cells[2].measures.diverged_chains = 2;
  EXPECT_EQ(choose_tuning_cell(cells, Method::kRsghmc), 1u);
  for (TuningCell& c : cells) c.measures.diverged_chains = 1;
  EXPECT_FALSE(choose_tuning_cell(cells, Method::kRsghmc).has_value());
}

TEST(TuningMapFiles, CsvAndJsonCarryEveryDocumentedColumn) {
  std::vector<TuningCell> cells = {cell(1, 4, 0.4, 0), cell(10, 6, 0.3, 0)};
  const std::string csv = tuning_map_csv(cells, TuningAxis::kMaxMove);
  EXPECT_EQ(csv.substr(0, csv.find('\n')),
            "method,mass,max_move,trained,chosen,ess_bulk,gradient_evals,ess_per_1000_grads,"
            "speed_ratio,test_nll,diverged_chains,chains,run_file,passes,ess_per_1000_passes,"
            "acceptance,divergent_trajectories");
  EXPECT_NE(csv.find("rsghmc,10,0.01,1,1,0,0,6,,0.3,0,2,cell.h5,0,0,0,0\n"), std::string::npos) << csv;
  const std::string json = tuning_map_json(cells, TuningAxis::kStepSize);
  EXPECT_NE(json.find("\"learning_rate\": 0.01"), std::string::npos) << json;
  EXPECT_NE(json.find("\"speed_ratio\": null"), std::string::npos) << json;
  EXPECT_NE(json.find("\"ess_per_1000_passes\": 0, \"acceptance\": 0, \"divergent_trajectories\": 0}"),
            std::string::npos) << json;
  EXPECT_NE(json.find("\"choice_rule\""), std::string::npos) << json;
}

}  // namespace
}  // namespace credence
