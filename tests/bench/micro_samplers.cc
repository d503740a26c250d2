// Microbenchmarks of each update rule on the parameter counts of DESIGN.md 6's shapes,
// with a model that hands back a fixed gradient (a copy of P floats), so the time is
// the rule's own: its arithmetic, its normal draws and the divergence check. Counter:
// ns per coordinate.
#include <benchmark/benchmark.h>

#include <Eigen/Core>
#include <cstdint>
#include <memory>

#include "bench_shapes.h"
#include "credence/samplers.h"

namespace {

using credence::bench::kShapes;
using credence::bench::Shape;

std::int64_t parameters(const Shape& s) {
  return s.inputs * s.hidden + s.hidden + s.hidden * s.hidden + s.hidden + s.hidden * s.classes +
         s.classes;
}

// U = sum theta^2 / 2 with a constant gradient: cheap, finite and allocation-free.
class FixedGradient final : public credence::PotentialFn {
 public:
  explicit FixedGradient(std::int64_t p) : grad_(Eigen::VectorXf::Random(p) * 1e-3f) {}
  std::int64_t rows() const override { return 8192; }
  credence::Status minibatch(credence::ConstThetaRef, credence::ThetaRef grad,
                             credence::MinibatchValue& out) override {
    grad = grad_;
    out.potential = 1.0;
    return credence::Status::ok_status();
  }

 private:
  Eigen::VectorXf grad_;
};

void BM_Update(benchmark::State& state, credence::Method method) {
  const Shape& s = kShapes[static_cast<std::size_t>(state.range(0))];
  const std::int64_t p = parameters(s);
  credence::SamplerSettings settings;
  settings.method = method;
  settings.relativistic.adapt_mass = false;  // the measured step is a kept-sample step
  auto sampler = credence::Sampler::create(settings, p, 8192, 11);
  if (!sampler.ok()) {
    state.SkipWithError("Sampler::create failed");
    return;
  }
  FixedGradient model(p);
  Eigen::VectorXf theta = Eigen::VectorXf::Zero(p);
  credence::StepContext context;
  context.step_size = (*sampler)->base_step_size();
  credence::StepReport report;
  for (auto _ : state) {
    auto status = (*sampler)->step(theta, model, context, report);
    benchmark::DoNotOptimize(status);
    benchmark::DoNotOptimize(theta.data());
    ++context.step;
  }
  state.SetLabel(std::string(s.name));
  state.counters["ns/coord"] = benchmark::Counter(
      static_cast<double>(p) * 1e-9,
      benchmark::Counter::kIsIterationInvariantRate | benchmark::Counter::kInvert);
}

}  // namespace

BENCHMARK_CAPTURE(BM_Update, sgld, credence::Method::kSgld)->DenseRange(0, 2);
BENCHMARK_CAPTURE(BM_Update, psgld, credence::Method::kPsgld)->DenseRange(0, 2);
BENCHMARK_CAPTURE(BM_Update, sghmc, credence::Method::kSghmc)->DenseRange(0, 2);
BENCHMARK_CAPTURE(BM_Update, rsghmc, credence::Method::kRsghmc)->DenseRange(0, 2);
BENCHMARK_CAPTURE(BM_Update, sgd, credence::Method::kSgd)->DenseRange(0, 2);
BENCHMARK_CAPTURE(BM_Update, momentum, credence::Method::kMomentum)->DenseRange(0, 2);
BENCHMARK_CAPTURE(BM_Update, rsgd, credence::Method::kRsgd)->DenseRange(0, 2);
BENCHMARK_CAPTURE(BM_Update, adam, credence::Method::kAdam)->DenseRange(0, 2);
BENCHMARK_MAIN();
