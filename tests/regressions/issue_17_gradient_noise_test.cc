// Issue 17: the gradient-noise correction of sghmc and rsghmc silently did nothing with
// the table potential, which does not estimate the minibatch gradient variance Vhat
// (docs/methods.md section 4). The correction is now refused with a message instead of
// running the uncorrected sampler under its name.
#include <gtest/gtest.h>

#include <random>

#include "credence/samplers.h"
#include "credence/table_potential.h"
#include "testing/seed.h"

namespace credence {
namespace {

TEST(Issue17GradientNoise, TheCorrectionIsRefusedWhenThePotentialHasNoVarianceEstimate) {
  TrainingRows rows;
  std::mt19937_64 engine(testing::test_seed(1703));
  std::normal_distribution<float> normal(0.0f, 1.0f);
  rows.x.resize(3, 40);
  for (Index i = 0; i < rows.x.size(); ++i) rows.x.data()[i] = normal(engine);
  for (Index n = 0; n < 40; ++n) rows.labels.push_back(rows.x(0, n) > 0 ? 1 : 0);
  Result<NetSpec> spec = net_spec_from_options(std::vector<Index>{4}, "tanh");
  ASSERT_TRUE(spec.ok());
  Result<ParamLayout> layout = resolve_layout(*spec, 3, 2);
  ASSERT_TRUE(layout.ok());
  auto factory = [&](int chain) -> std::unique_ptr<PotentialFn> {
    return std::move(*TablePotential::create(rows, *layout, spec->prior, {},
                                             {.batch_rows = 8},
                                             static_cast<std::uint64_t>(chain)));
  };
  for (Method method : {Method::kSghmc, Method::kRsghmc}) {
    SamplerSettings s;
    s.method = method;
    s.sghmc.correct_gradient_noise = method == Method::kSghmc;
    s.relativistic.correct_gradient_noise = method == Method::kRsghmc;
    ChainSettings chains;
    chains.chains = 1;
    chains.burn_in = 5;
    chains.thin = 1;
    chains.samples = 5;
    Result<RunOutcome> run = run_chains(s, chains, layout->num_params, factory, {}, {});
    ASSERT_TRUE(run.ok()) << run.status().to_string();
    EXPECT_EQ(run->status.code(), StatusCode::kInvalidInput) << method_name(method);
    EXPECT_NE(run->status.message().find("gradient-noise correction"), std::string::npos)
        << run->status.to_string();
    EXPECT_EQ(run->chains[0].kept, 0) << method_name(method);
  }
}

}  // namespace
}  // namespace credence
