// This machine's float32 GEMM rate: Eigen 3.4's own kernels (this target does not define
// EIGEN_USE_BLAS) and OpenBLAS's sgemm, on square sizes and on the products of a step of
// DESIGN.md 6's shapes. scripts/bench states the step rates as a fraction of these.
// Threads: OpenBLAS follows OPENBLAS_NUM_THREADS; Eigen's GEMM runs on one thread here.
#include <benchmark/benchmark.h>

#include <Eigen/Core>

namespace {

#ifdef CREDENCE_BENCH_SGEMM
extern "C" void sgemm_(const char* transa, const char* transb, const int* m, const int* n,
                       const int* k, const float* alpha, const float* a, const int* lda,
                       const float* b, const int* ldb, const float* beta, float* c,
                       const int* ldc);
#endif

void set_rate(benchmark::State& state) {
  const double flops = 2.0 * static_cast<double>(state.range(0)) *
                       static_cast<double>(state.range(1)) * static_cast<double>(state.range(2));
  state.counters["GFLOP/s"] =
      benchmark::Counter(flops * 1e-9, benchmark::Counter::kIsIterationInvariantRate);
}

// C (m, n) = A (m, k) B (k, n).
void BM_EigenGemm(benchmark::State& state) {
  const auto m = state.range(0), n = state.range(1), k = state.range(2);
  Eigen::MatrixXf a = Eigen::MatrixXf::Random(m, k), b = Eigen::MatrixXf::Random(k, n);
  Eigen::MatrixXf c(m, n);
  for (auto _ : state) {
    c.noalias() = a * b;
    benchmark::DoNotOptimize(c.data());
  }
  set_rate(state);
}

#ifdef CREDENCE_BENCH_SGEMM
void BM_OpenblasSgemm(benchmark::State& state) {
  const int m = static_cast<int>(state.range(0)), n = static_cast<int>(state.range(1)),
            k = static_cast<int>(state.range(2));
  Eigen::MatrixXf a = Eigen::MatrixXf::Random(m, k), b = Eigen::MatrixXf::Random(k, n);
  Eigen::MatrixXf c(m, n);
  const float one = 1.0f, zero = 0.0f;
  for (auto _ : state) {
    sgemm_("N", "N", &m, &n, &k, &one, a.data(), &m, b.data(), &k, &zero, c.data(), &m);
    benchmark::DoNotOptimize(c.data());
  }
  set_rate(state);
}
#endif

// Square sizes, then the forward products (hidden x batch x fan-in) of the three shapes.
void sizes(benchmark::internal::Benchmark* b) {
  for (int n : {256, 512, 1024}) b->Args({n, n, n});
  b->Args({64, 128, 64})->Args({256, 256, 256})->Args({1024, 512, 1024});
}

}  // namespace

BENCHMARK(BM_EigenGemm)->Apply(sizes)->Unit(benchmark::kMicrosecond);
#ifdef CREDENCE_BENCH_SGEMM
BENCHMARK(BM_OpenblasSgemm)->Apply(sizes)->Unit(benchmark::kMicrosecond);
#endif
BENCHMARK_MAIN();
