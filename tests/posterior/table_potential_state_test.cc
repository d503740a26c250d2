// TablePotential's resumable state: the minibatch position saved and restored.
#include <gtest/gtest.h>

#include <cstring>
#include <random>

#include "credence/table_potential.h"
#include "testing/seed.h"

namespace credence {
namespace {

struct Fixture {
  TrainingRows rows;
  ParamLayout layout;
  PriorSpec prior;
};

Fixture make_fixture() {
  Fixture f;
  std::mt19937_64 engine(testing::test_seed(71));
  std::normal_distribution<float> normal(0.0f, 1.0f);
  f.rows.x.resize(4, 90);
  for (Index i = 0; i < f.rows.x.size(); ++i) f.rows.x.data()[i] = normal(engine);
  for (Index n = 0; n < 90; ++n) f.rows.labels.push_back(f.rows.x(0, n) > 0 ? 1 : 0);
  Result<NetSpec> spec = net_spec_from_options(std::vector<Index>{5}, "tanh");
  f.prior = spec->prior;
  f.layout = *resolve_layout(*spec, 4, 2);
  return f;
}

std::unique_ptr<TablePotential> make(const Fixture& f, std::uint64_t seed) {
  auto made = TablePotential::create(f.rows, f.layout, f.prior, {}, {.batch_rows = 16}, seed);
  EXPECT_TRUE(made.ok());
  return std::move(*made);
}

TEST(TablePotentialState, RestoredPotentialDrawsTheSameMinibatches) {
  // 90 rows in batches of 16: 6 batches per epoch (the last of 10). After 9 batches
  // (mid second epoch) the state is saved; a fresh potential with the same seed that
  // restores it must give identical U~ and gradients for the next 20 batches.
  const Fixture f = make_fixture();
  auto original = make(f, 5);
  Eigen::VectorXf theta(f.layout.num_params), grad(f.layout.num_params);
  initialize_params<float>(theta, f.layout, 3);
  MinibatchValue value;
  for (int i = 0; i < 9; ++i) ASSERT_TRUE(original->minibatch(theta, grad, value).ok());
  NamedArrays saved;
  original->save_state(saved);
  ASSERT_EQ(saved.words.at("batch_position"), (std::vector<std::uint64_t>{1, 48}));
  EXPECT_EQ(original->batch_position(), (BatchPosition{1, 48}));

  auto restored = make(f, 5);
  ASSERT_TRUE(restored->restore_state(saved).ok());
  auto unrestored = make(f, 5);
  Eigen::VectorXf grad_b(f.layout.num_params), grad_c(f.layout.num_params);
  MinibatchValue value_b, value_c;
  bool differs_without_restore = false;
  for (int i = 0; i < 20; ++i) {
    ASSERT_TRUE(original->minibatch(theta, grad, value).ok());
    ASSERT_TRUE(restored->minibatch(theta, grad_b, value_b).ok());
    ASSERT_TRUE(unrestored->minibatch(theta, grad_c, value_c).ok());
    ASSERT_EQ(value.potential, value_b.potential) << "batch " << i;
    ASSERT_EQ(std::memcmp(grad.data(), grad_b.data(), sizeof(float) * grad.size()), 0);
    differs_without_restore = differs_without_restore || value.potential != value_c.potential;
  }
  EXPECT_TRUE(differs_without_restore) << "the check could not fail";
}

TEST(TablePotentialState, DamagedStateIsRefusedAndChangesNothing) {
  const Fixture f = make_fixture();
  auto potential = make(f, 5);
  NamedArrays empty;
  Status missing = potential->restore_state(empty);
  EXPECT_EQ(missing.code(), StatusCode::kCorrupt);
  EXPECT_NE(missing.message().find("lacks 'batch_position'"), std::string::npos);
  NamedArrays beyond;
  beyond.words["batch_position"] = {0, 91};
  Status outside = potential->restore_state(beyond);
  EXPECT_EQ(outside.code(), StatusCode::kCorrupt);
  EXPECT_EQ(outside.message(),
            "restoring the minibatch position: batch position (epoch 0, cursor 91) is outside "
            "a table of 90 rows; the saved state is damaged or belongs to other data");
  EXPECT_EQ(potential->batch_position(), (BatchPosition{0, 0}));
}

// A prior that learns its scale (docs/methods.md section 15): Gibbs draws every pass (6 batches
// of 16 over 90 rows), the precisions and their stream saved and restored with the state,
// and none for optimizers (learn_prior_scale off).
TEST(TablePotentialState, LearnedPrecisionsUpdateEveryPassAndResume) {
  Fixture f = make_fixture();
  f.prior.learn_scale = true;
  auto make_learning = [&f](bool learn) {
    PotentialSettings settings;
    settings.learn_prior_scale = learn;
    auto made = TablePotential::create(f.rows, f.layout, f.prior, settings, {.batch_rows = 16}, 9);
    EXPECT_TRUE(made.ok());
    return std::move(*made);
  };
  auto original = make_learning(true);
  EXPECT_EQ(original->prior_update_every(), 6);
  EXPECT_EQ(make_learning(false)->prior_update_every(), 0);
  EXPECT_TRUE(make_learning(false)->hyperparameters().empty());
  const std::vector<double> start(original->hyperparameters().begin(),
                                  original->hyperparameters().end());
  ASSERT_EQ(start.size(), 4u);
  EXPECT_DOUBLE_EQ(start[0], 4.0);  // fan_in / s^2 with s = 1
  Eigen::VectorXf theta(f.layout.num_params);
  initialize_params<float>(theta, f.layout, 3);
  auto steps = [&theta](TablePotential& u, std::int64_t from, std::int64_t to) {
    for (std::int64_t step = from; step < to; ++step) {
      bool changed = false;
      EXPECT_TRUE(u.before_step(theta, step, changed).ok());
      EXPECT_EQ(changed, step > 0 && step % 6 == 0) << step;
    }
  };
  steps(*original, 0, 6);
  EXPECT_EQ(original->hyperparameters()[0], start[0]);
  steps(*original, 6, 8);
  EXPECT_NE(original->hyperparameters()[0], start[0]);
  NamedArrays saved;
  original->save_state(saved);
  ASSERT_EQ(saved.doubles.at("prior_precision").size(), 4u);
  auto restored = make_learning(true);
  ASSERT_TRUE(restored->restore_state(saved).ok());
  steps(*original, 8, 20);
  steps(*restored, 8, 20);
  for (std::size_t b = 0; b < 4; ++b) {
    EXPECT_EQ(restored->hyperparameters()[b], original->hyperparameters()[b]);
  }
  saved.words.erase("prior_rng");
  EXPECT_EQ(make_learning(true)->restore_state(saved).code(), StatusCode::kCorrupt);
}

}  // namespace
}  // namespace credence

namespace credence {
namespace {

// An optimizer's evidence updates (posterior/precision_evidence.h): the precisions are the
// whole state, so a potential restored after one update continues with the very updates
// of the uninterrupted one; a fresh one (no restore) does not.
TEST(TablePotentialState, EvidencePrecisionsResumeBitForBit) {
  Fixture f = make_fixture();
  f.prior.learn_scale = true;
  PotentialSettings settings;
  settings.temperature = 0;
  settings.learn_prior_scale = false;
  settings.evidence_prior_scale = true;
  auto make_evidence = [&]() {
    auto made = TablePotential::create(f.rows, f.layout, f.prior, settings, {.batch_rows = 16}, 5);
    EXPECT_TRUE(made.ok());
    return std::move(*made);
  };
  Eigen::VectorXf theta(f.layout.num_params);
  initialize_params<float>(theta, f.layout, 3);
  theta *= 4.0f;  // large weights: the evidence wants looser precisions than the start
  auto original = make_evidence();
  const std::vector<double> start(original->hyperparameters().begin(),
                                  original->hyperparameters().end());
  bool changed = false;
  ASSERT_TRUE(original->before_step(theta, 499, changed).ok());
  EXPECT_FALSE(changed);  // still warming up
  ASSERT_TRUE(original->before_step(theta, 500, changed).ok());
  EXPECT_TRUE(changed);
  const std::vector<double> first(original->hyperparameters().begin(),
                                  original->hyperparameters().end());
  EXPECT_NE(first, start);
  NamedArrays saved;
  original->save_state(saved);
  ASSERT_EQ(saved.doubles.at("prior_precision"), first);

  auto restored = make_evidence();
  ASSERT_TRUE(restored->restore_state(saved).ok());
  auto unrestored = make_evidence();
  for (std::int64_t step : {700, 900}) {
    ASSERT_TRUE(original->before_step(theta, step, changed).ok());
    ASSERT_TRUE(restored->before_step(theta, step, changed).ok());
    ASSERT_TRUE(unrestored->before_step(theta, step, changed).ok());
  }
  const auto a = original->hyperparameters(), b = restored->hyperparameters(),
             c = unrestored->hyperparameters();
  ASSERT_EQ(a.size(), b.size());
  EXPECT_EQ(std::memcmp(a.data(), b.data(), a.size() * sizeof(double)), 0);
  EXPECT_NE(std::memcmp(a.data(), c.data(), a.size() * sizeof(double)), 0)
      << a[0] << " " << a[1] << " " << a[2] << " " << a[3] << " / " << first[0] << " " << first[1] << " " << first[2] << " " << first[3] << " / " << start[0] << " " << start[1] << " " << start[2] << " " << start[3];
}

}  // namespace
}  // namespace credence
