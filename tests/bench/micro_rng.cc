// Microbenchmarks of the normal generator (src/util/rng.h) against std::normal_distribution,
// on the parameter counts of DESIGN.md 6's shapes. Counter: ns per draw (DESIGN.md 6 targets
// 1.3-1.8 ns for a vectorised generator, about 10 ns for the standard library's).
#include <benchmark/benchmark.h>

#include <cstdint>
#include <random>
#include <span>
#include <vector>

#include "bench_shapes.h"
#include "util/rng.h"

namespace {

using credence::bench::kShapes;

std::int64_t parameters(std::size_t shape) {
  const auto& s = kShapes[shape];
  return s.inputs * s.hidden + s.hidden + s.hidden * s.hidden + s.hidden + s.hidden * s.classes +
         s.classes;
}

void set_per_draw(benchmark::State& state, std::int64_t n) {
  state.counters["ns/draw"] = benchmark::Counter(
      static_cast<double>(n) * 1e-9,
      benchmark::Counter::kIsIterationInvariantRate | benchmark::Counter::kInvert);
  state.SetLabel(std::string(kShapes[static_cast<std::size_t>(state.range(0))].name));
}

void BM_FillNormal(benchmark::State& state) {
  const std::int64_t n = parameters(static_cast<std::size_t>(state.range(0)));
  std::vector<float> out(static_cast<std::size_t>(n));
  credence::Rng rng(5);
  for (auto _ : state) {
    rng.fill_normal(std::span<float>(out));
    benchmark::DoNotOptimize(out.data());
  }
  set_per_draw(state, n);
}

void BM_StdNormalDistribution(benchmark::State& state) {
  const std::int64_t n = parameters(static_cast<std::size_t>(state.range(0)));
  std::vector<float> out(static_cast<std::size_t>(n));
  std::mt19937_64 engine(5);
  std::normal_distribution<float> normal;
  for (auto _ : state) {
    for (float& v : out) v = normal(engine);
    benchmark::DoNotOptimize(out.data());
  }
  set_per_draw(state, n);
}

}  // namespace

BENCHMARK(BM_FillNormal)->DenseRange(0, 2);
BENCHMARK(BM_StdNormalDistribution)->DenseRange(0, 2);
BENCHMARK_MAIN();
