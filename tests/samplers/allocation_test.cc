// No heap allocation inside Sampler::step() for any method (DESIGN.md 6, STYLE.md 8):
// this executable counts calls to malloc (Eigen's allocator and operator new both
// end there) by interposing glibc's malloc.
#include <gtest/gtest.h>

#include <atomic>
#include <cstdlib>

#include "credence/samplers.h"
#include "testing/targets.h"

namespace {
std::atomic<long> g_allocations{0};
}  // namespace

extern "C" void* __libc_malloc(std::size_t size);  // glibc's own allocator

extern "C" void* malloc(std::size_t size) {
  g_allocations.fetch_add(1, std::memory_order_relaxed);
  return __libc_malloc(size);
}

namespace credence {
namespace {

TEST(StepLoop, TheCounterSeesAllocations) {
  // The check below can fail: an Eigen vector's allocation is counted.
  const long before = g_allocations.load();
  auto* volatile allocate = &std::malloc;
  void* p = allocate(64);
  std::free(p);
  Eigen::VectorXf v(1000);
  v.setZero();
  EXPECT_GE(g_allocations.load() - before, 2 + (v[0] == 0 ? 0 : 1));
}

TEST(StepLoop, NoMethodAllocatesInsideStep) {
  for (Method method :
       {Method::kSgld, Method::kPsgld, Method::kSghmc, Method::kRsghmc, Method::kSgd,
        Method::kMomentum, Method::kRsgd, Method::kAdam, Method::kHmc, Method::kRhmc,
        Method::kSanta, Method::kSantaOpt}) {
    SamplerSettings s;
    s.method = method;
    s.step_size = 0.01;
    s.psgld.gamma_correction = true;
    s.sghmc.correct_gradient_noise = true;
    s.relativistic.correct_gradient_noise = true;
    s.relativistic.adapt_window = 3;
    s.relativistic.slices = {{0, 100, 0, 0}, {200, 57, 0, 0}};
    testing::IndependentGaussian potential(Eigen::VectorXf::Ones(513), 0.1);
    auto made = Sampler::create(s, 513, 1, 3);
    ASSERT_TRUE(made.ok());
    Eigen::VectorXf theta = Eigen::VectorXf::Constant(513, 0.3f);
    StepReport report;
    long before = 0;
    for (int t = 0; t < 60; ++t) {
      if (t == 5) before = g_allocations.load();
      StepContext context;
      context.step = t;
      context.step_size = 0.01;
      context.burn_in = t < 30;
      context.total_steps = 60;  // santa-opt refines from step 30
      ASSERT_TRUE((*made)->step(theta, potential, context, report).ok());
    }
    EXPECT_EQ(g_allocations.load() - before, 0) << method_name(method);
  }
}

}  // namespace
}  // namespace credence
