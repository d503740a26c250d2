// SampleSummarizer::summarize allocates nothing after construction: this executable
// counts malloc (Eigen's allocator and operator new end there) by interposing glibc's.
#include <gtest/gtest.h>

#include <atomic>
#include <cstdlib>
#include <cstring>
#include <vector>

#include "credence/summaries.h"

#include "testing/alloc_counter.h"

// operator new ends in malloc (libstdc++), so it is counted through the override above.

namespace credence {
namespace {

TEST(SampleSummarizer, SummarizeAllocatesNothingAfterConstruction) {
  // Shapes: logistic regression and two hidden layers; 32 probe rows (docs/methods.md 10.3
  // suggests 16-32 tracked rows) and 256 (the probe log-likelihood set).
  for (Index rows : {32, 256}) {
    for (std::vector<Index> hidden : {std::vector<Index>{}, std::vector<Index>{64, 64}}) {
      Result<NetSpec> spec = net_spec_from_options(hidden, "relu");
      Result<ParamLayout> layout = resolve_layout(*spec, 20, 4);
      ASSERT_TRUE(layout.ok());
      ProbeSet probe;
      probe.x = Eigen::MatrixXf::Random(20, rows);
      for (Index r = 0; r < rows; ++r) probe.labels.push_back(static_cast<std::int32_t>(r % 4));
      Result<SampleSummarizer> summarizer = SampleSummarizer::create(*layout, probe, 8, 3);
      ASSERT_TRUE(summarizer.ok());
      SampleSummary out = summarizer->make_summary();
      Eigen::VectorXf theta(layout->num_params);
      initialize_params<float>(theta, *layout, 5);

      g_mallocs = 0;
      g_blas_mallocs = 0;
      g_counting = true;
      double sum = 0;
      for (int sample = 0; sample < 10; ++sample) {
        ASSERT_TRUE(summarizer->summarize(theta, out).ok());
        sum += out.probe_log_lik + out.projections.sum() + out.layer_sq_norms.sum();
        theta[0] += 1e-3f;
      }
      g_counting = false;
      EXPECT_TRUE(std::isfinite(sum));
      EXPECT_EQ(g_mallocs.load(), 0) << "R=" << rows << " layers " << hidden.size() + 1;
      std::printf(
          "[ measured ] R=%ld, %zu hidden: 10 summaries, %ld allocations outside "
          "OpenBLAS, %ld inside OpenBLAS\n",
          static_cast<long>(rows), hidden.size(), g_mallocs.load(), g_blas_mallocs.load());
    }
  }
}

// The counter itself works (a test that cannot fail is a defect), and a summary that
// was never sized is sized on the first call (that call may allocate).
TEST(SampleSummarizer, TheCounterSeesTheFirstSizing) {
  Result<NetSpec> spec = net_spec_from_options(std::vector<Index>{}, "relu");
  Result<ParamLayout> layout = resolve_layout(*spec, 3, 2);
  ProbeSet probe{Eigen::MatrixXf::Ones(3, 5), {0, 1, 0, 1, 0}};
  Result<SampleSummarizer> summarizer = SampleSummarizer::create(*layout, probe, 4, 1);
  ASSERT_TRUE(summarizer.ok());
  SampleSummary fresh;
  const Eigen::VectorXf theta = Eigen::VectorXf::Ones(layout->num_params);
  g_mallocs = 0;
  g_counting = true;
  ASSERT_TRUE(summarizer->summarize(theta, fresh).ok());
  g_counting = false;
  EXPECT_GE(g_mallocs.load(), 3);  // probe_prob, projections, layer_sq_norms
  EXPECT_EQ(fresh.probe_prob.size(), 5);
}

}  // namespace
}  // namespace credence
