// Counts heap allocations during repeated potential evaluations: there must be none.
// Replaces the global operator new (and, through glibc's __libc_* entry points, malloc)
// for this test executable only.
#include <gtest/gtest.h>

#include <atomic>
#include <cstring>
#include <cstdlib>
#include <new>
#include <vector>

#include "credence/posterior.h"

#include "testing/alloc_counter.h"

namespace {
std::atomic<long> g_news{0};  // operator new calls, counted apart from the malloc family
}  // namespace

// operator new straight to glibc, so its calls are counted in g_news and not twice.
void* operator new(std::size_t size) {
  if (g_counting.load(std::memory_order_relaxed)) ++g_news;
  if (void* p = __libc_malloc(size == 0 ? 1 : size)) return p;
  throw std::bad_alloc();
}
void operator delete(void* pointer) noexcept { std::free(pointer); }
void operator delete(void* pointer, std::size_t) noexcept { std::free(pointer); }

namespace credence {
namespace {

// Shapes of DESIGN.md section 6 "small" and "medium" (large products go through BLAS).
struct Shape {
  Index d;
  std::vector<Index> hidden;
  Index k;
  Index batch;
};

TEST(Potential, EvaluateAllocatesNothingAfterWarmUp) {
  for (const Shape& shape : {Shape{32, {64, 64}, 2, 128}, Shape{100, {256, 256}, 5, 256}}) {
    for (const char* activation : {"relu", "tanh", "softplus"}) {
      Result<NetSpec> spec = net_spec_from_options(shape.hidden, activation);
      Result<ParamLayout> layout = resolve_layout(*spec, shape.d, shape.k);
      ASSERT_TRUE(layout.ok());
      const Index n = 3 * shape.batch;
      PotentialSettings settings;
      settings.num_train_rows = n;
      settings.max_batch_rows = shape.batch;
      Result<Potential<float>> potential =
          Potential<float>::create(*layout, spec->prior, settings);
      ASSERT_TRUE(potential.ok());
      VecX<float> theta(layout->num_params), grad(layout->num_params);
      initialize_params<float>(theta, *layout, 3);
      MatX<float> x = MatX<float>::Random(shape.d, n);
      std::vector<std::int32_t> labels(static_cast<std::size_t>(n));
      for (std::size_t i = 0; i < labels.size(); ++i) {
        labels[i] = static_cast<std::int32_t>(i % static_cast<std::size_t>(shape.k));
      }
      auto batch = x.leftCols(shape.batch);
      std::span<const std::int32_t> y(labels.data(), static_cast<std::size_t>(shape.batch));
      ASSERT_TRUE(potential->evaluate(theta, batch, y, grad).ok());  // warm-up
      ASSERT_TRUE(potential->evaluate_full(theta, x, labels, grad).ok());

      g_news = 0;
      g_mallocs = 0;
      g_blas_mallocs = 0;
      g_counting = true;
      double sum = 0;
      for (int step = 0; step < 10; ++step) {
        sum += *potential->evaluate(theta, batch, y, grad);
        theta[0] += 1e-3f * grad[0];
      }
      sum += *potential->evaluate_full(theta, x, labels, grad);
      sum += *potential->value_full(theta, x, labels);
      g_counting = false;
      EXPECT_TRUE(std::isfinite(sum));
      EXPECT_EQ(g_news.load(), 0) << activation << " D=" << shape.d;
      EXPECT_EQ(g_mallocs.load(), 0) << activation << " D=" << shape.d;
      std::printf("[ measured ] D=%ld %s: 16 evaluations, %ld operator new, %ld malloc "
                  "outside OpenBLAS, %ld inside OpenBLAS\n",
                  static_cast<long>(shape.d), activation, g_news.load(), g_mallocs.load(),
                  g_blas_mallocs.load());
    }
  }
}

// The counter itself works (a test that cannot fail is a defect).
TEST(Potential, AllocationCounterSeesAllocations) {
  g_news = 0;
  g_mallocs = 0;
  g_counting = true;
  auto* v = new std::vector<int>(100);
  void* raw = std::malloc(64);
  Eigen::MatrixXf m(50, 50);
  g_counting = false;
  EXPECT_GE(g_news.load(), 2);
  EXPECT_GE(g_mallocs.load(), 2);
  std::free(raw);
  delete v;
  m.setZero();
}

}  // namespace
}  // namespace credence
