// Optimizers against scikit-learn: MAP multinomial logistic regression on the
// breast-cancer table bundled with Debian's python3-sklearn (load_breast_cancer,
// exported by tests/tools/export_sklearn_tables.py).
//
// Reference: sklearn.linear_model.LogisticRegression(multi_class="multinomial",
// solver="lbfgs", C) minimises 0.5/C ||W||^2 + sum_n NLL_n with an unpenalised
// intercept (tests/tools/sklearn_logistic.py). credence's potential is the same with a
// Gaussian prior of variance C on each weight (fan-in scaling off). Intercept
// convention: credence has no unpenalised parameter, so the biases get a prior scale
// of 1e3, whose pull (b / 1e6 on a gradient of order N) moves the optimum by far less
// than the 1e-3 tolerance.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <numeric>
#include <sstream>
#include <string>
#include <vector>

#include "credence/data.h"
#include "credence/net.h"
#include "credence/samplers.h"
#include "credence/table_potential.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

constexpr double kC = 1.0;  // sklearn's inverse regularisation strength

struct Problem {
  Dataset data;
  TrainingRows rows;
  ParamLayout layout;
  PriorSpec prior;
  std::vector<std::vector<double>> reference;  // (N, K) sklearn's predict_proba
};

std::vector<std::vector<double>> read_matrix(const std::string& path) {
  std::vector<std::vector<double>> out;
  std::ifstream in(path);
  for (std::string line; std::getline(in, line);) {
    std::vector<double> row;
    std::stringstream cells(line);
    for (std::string cell; std::getline(cells, cell, ',');) row.push_back(std::stod(cell));
    out.push_back(row);
  }
  return out;
}

Problem make_problem(const testing::TempDir& dir) {
  Problem p;
  DataOptions options;
  options.schema.target = "diagnosis";
  Result<Dataset> data = load_dataset(std::string(CREDENCE_REFDATA_DIR) + "/breast_cancer.csv",
                                      options);
  EXPECT_TRUE(data.ok()) << data.status().message() << " (run fixtures/sklearn_tables first)";
  p.data = std::move(*data);
  std::vector<std::int64_t> all(static_cast<std::size_t>(p.data.x.cols()));
  std::iota(all.begin(), all.end(), std::int64_t{0});
  p.rows = gather_training_rows(p.data.x, p.data.labels, all);

  p.prior.weight_scale = std::sqrt(kC);
  p.prior.fan_in_scaling = false;
  p.prior.bias_scale = 1e3;
  const auto classes = static_cast<Index>(p.data.preprocessing.class_names.size());
  Result<ParamLayout> layout = resolve_layout(NetSpec{{}, p.prior}, p.rows.x.rows(), classes);
  EXPECT_TRUE(layout.ok()) << layout.status().message();
  p.layout = *layout;

  // The same encoded rows go to scikit-learn, so only the optimizers differ.
  std::ofstream xs(dir.path() / "x.csv"), ys(dir.path() / "y.csv");
  xs.precision(9);
  for (Index n = 0; n < p.rows.x.cols(); ++n) {
    for (Index j = 0; j < p.rows.x.rows(); ++j) xs << (j ? "," : "") << p.rows.x(j, n);
    xs << "\n";
    ys << p.rows.labels[static_cast<std::size_t>(n)] << "\n";
  }
  xs.close();
  ys.close();
  const std::string out = (dir.path() / "proba.csv").string();
  const std::string command = std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
                              "/tests/tools/sklearn_logistic.py' '" +
                              (dir.path() / "x.csv").string() + "' '" +
                              (dir.path() / "y.csv").string() + "' " + std::to_string(kC) +
                              " '" + out + "'";
  EXPECT_EQ(std::system(command.c_str()), 0) << command;
  p.reference = read_matrix(out);
  return p;
}

// Runs one chain of `steps` full-batch steps and returns the final iterate.
Eigen::VectorXf optimize(const Problem& p, const SamplerSettings& settings, std::int64_t steps) {
  ChainSettings chains;
  chains.chains = 1;
  chains.burn_in = steps - 1;
  chains.thin = 1;
  chains.samples = 1;
  chains.seed = 7;
  const auto n = static_cast<std::int64_t>(p.rows.labels.size());
  auto factory = [&](int chain) -> std::unique_ptr<PotentialFn> {
    auto potential = TablePotential::create(p.rows, p.layout, p.prior, {}, {.batch_rows = n},
                                            static_cast<std::uint64_t>(chain));
    EXPECT_TRUE(potential.ok()) << potential.status().message();
    return std::move(*potential);
  };
  auto init = [](int, ThetaRef theta) {
    theta.setZero();
    return Status::ok_status();
  };
  Eigen::VectorXf final_theta;
  ChainHooks hooks;
  hooks.on_sample = [&](const KeptSample& s) { final_theta = s.theta; };
  Result<RunOutcome> run = run_chains(settings, chains, p.layout.num_params, factory, init, hooks);
  EXPECT_TRUE(run.ok()) << run.status().message();
  EXPECT_TRUE(run->status.ok()) << run->status.message();
  return final_theta;
}

// Largest |p_credence - p_sklearn| over every row and class.
double max_probability_gap(const Problem& p, const Eigen::VectorXf& theta) {
  Network<double> network(p.layout);
  Workspace<double> workspace(p.layout, p.rows.x.cols());
  Eigen::VectorXd theta_d = theta.cast<double>();
  Eigen::MatrixXd x = p.rows.x.cast<double>();
  EXPECT_TRUE(network.forward(workspace, theta_d, x).ok());
  double gap = 0;
  for (Index n = 0; n < x.cols(); ++n) {
    for (Index k = 0; k < p.layout.num_classes; ++k) {
      const double mine = std::exp(workspace.log_probs()(k, n));
      gap = std::max(gap, std::abs(mine - p.reference[static_cast<std::size_t>(n)]
                                                     [static_cast<std::size_t>(k)]));
    }
  }
  return gap;
}

class LogisticMap : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    problem_ = new Problem(make_problem(*dir_));
  }
  static void TearDownTestSuite() {
    delete problem_;
    delete dir_;
  }
  static testing::TempDir* dir_;
  static Problem* problem_;
};
testing::TempDir* LogisticMap::dir_ = nullptr;
Problem* LogisticMap::problem_ = nullptr;

TEST_F(LogisticMap, ReferenceIsNotTrivial) {
  // Guards the comparison: scikit-learn's probabilities must separate the classes.
  ASSERT_EQ(problem_->reference.size(), 569u);
  double confident = 0;
  for (const auto& row : problem_->reference) confident += (row[0] > 0.9 || row[1] > 0.9);
  EXPECT_GT(confident, 450);
  // and an untrained network must be far from them (the tolerance means something).
  EXPECT_GT(max_probability_gap(*problem_, Eigen::VectorXf::Zero(problem_->layout.num_params)),
            0.4);
}

TEST_F(LogisticMap, MomentumMatchesScikitLearn) {
  SamplerSettings settings;
  settings.method = Method::kMomentum;
  settings.learning_rate = 0.1;
  const double gap = max_probability_gap(*problem_, optimize(*problem_, settings, 20000));
  std::printf("momentum: max |p - p_sklearn| = %.3g\n", gap);
  EXPECT_LT(gap, 1e-3);
}

TEST_F(LogisticMap, RelativisticSgdMatchesScikitLearn) {
  SamplerSettings settings;
  settings.method = Method::kRsgd;
  settings.learning_rate = 0.1;
  const double gap = max_probability_gap(*problem_, optimize(*problem_, settings, 20000));
  std::printf("rsgd: max |p - p_sklearn| = %.3g\n", gap);
  EXPECT_LT(gap, 1e-3);
}

TEST_F(LogisticMap, AdamMatchesScikitLearn) {
  SamplerSettings settings;
  settings.method = Method::kAdam;
  // A constant step: full-batch Adam then hovers within about lr of the optimum.
  settings.learning_rate = 1e-3;
  const double gap = max_probability_gap(*problem_, optimize(*problem_, settings, 20000));
  std::printf("adam: max |p - p_sklearn| = %.3g\n", gap);
  EXPECT_LT(gap, 1e-3);
}

TEST_F(LogisticMap, SantaOptimizerMatchesScikitLearn) {
  // Annealed exploration for the first half, then refinement without noise (docs/methods.md 16).
  // At a constant step the default sigma = 0.999 lets v follow the vanishing gradient, so
  // g grows and the refinement hovers: measured gap 7e-3 at lr 1e-2, 5e-3 at 1e-3, 4e-5
  // at 1e-4; a longer memory (sigma = 0.9999) reaches 4e-5 at every lr from 1e-4 to 1e-2.
  SamplerSettings settings;
  settings.method = Method::kSantaOpt;
  settings.learning_rate = 1e-4;
  double gap = max_probability_gap(*problem_, optimize(*problem_, settings, 20000));
  std::printf("santa-opt lr 1e-4: max |p - p_sklearn| = %.3g\n", gap);
  EXPECT_LT(gap, 1e-3);
  settings.learning_rate = 1e-2;
  settings.santa.sigma = 0.9999;
  gap = max_probability_gap(*problem_, optimize(*problem_, settings, 20000));
  std::printf("santa-opt lr 1e-2, sigma 0.9999: max |p - p_sklearn| = %.3g\n", gap);
  EXPECT_LT(gap, 1e-3);
}

}  // namespace
}  // namespace credence
