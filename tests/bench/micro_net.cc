// Microbenchmarks of the network on the shapes of DESIGN.md 6: forward, backward, and one
// whole minibatch potential (gather + forward + loss + backward + prior), as a chain's step
// evaluates it. Counters: GFLOP/s of the GEMMs (2 x batch x weights forward, 4 x backward).
#include <benchmark/benchmark.h>

#include <Eigen/Core>
#include <cstdint>
#include <memory>
#include <random>
#include <vector>

#include "bench_shapes.h"
#include "credence/net.h"
#include "credence/table_potential.h"

namespace {

using credence::bench::kShapes;
using credence::bench::Shape;

struct NetFixture {
  explicit NetFixture(const Shape& s)
      : layout(make_layout(s)),
        net(layout),
        ws(layout, s.batch),
        theta(layout.num_params),
        grad(layout.num_params),
        x(Eigen::MatrixXf::Random(s.inputs, s.batch)),
        labels(static_cast<std::size_t>(s.batch)),
        log_lik(s.batch) {
    credence::initialize_params<float>(theta, layout, 7);
    grad.setZero();
    for (std::size_t i = 0; i < labels.size(); ++i) {
      labels[i] = static_cast<std::int32_t>(i % static_cast<std::size_t>(s.classes));
    }
  }
  static credence::ParamLayout make_layout(const Shape& s) {
    const std::vector<credence::Index> hidden = {s.hidden, s.hidden};
    auto spec = credence::net_spec_from_options(hidden, "relu");
    return credence::resolve_layout(spec.value(), s.inputs, s.classes).value();
  }
  credence::ParamLayout layout;
  credence::Network<float> net;
  credence::Workspace<float> ws;
  Eigen::VectorXf theta, grad;
  Eigen::MatrixXf x;
  std::vector<std::int32_t> labels;
  Eigen::VectorXf log_lik;
};

double weights(const Shape& s) { return credence::bench::step_flops(s) / (6.0 * static_cast<double>(s.batch)); }

void BM_Forward(benchmark::State& state) {
  const Shape& s = kShapes[static_cast<std::size_t>(state.range(0))];
  NetFixture f(s);
  for (auto _ : state) {
    auto status = f.net.forward(f.ws, f.theta, f.x);
    benchmark::DoNotOptimize(status);
    benchmark::DoNotOptimize(f.ws.logits().data());
  }
  state.SetLabel(std::string(s.name));
  state.counters["GFLOP/s"] = benchmark::Counter(2.0 * static_cast<double>(s.batch) * weights(s) * 1e-9,
                                                 benchmark::Counter::kIsIterationInvariantRate);
}

void BM_Backward(benchmark::State& state) {
  const Shape& s = kShapes[static_cast<std::size_t>(state.range(0))];
  NetFixture f(s);
  if (!f.net.forward(f.ws, f.theta, f.x).ok() || !f.net.log_likelihood(f.log_lik, f.ws, f.labels).ok()) {
    state.SkipWithError("forward failed");
    return;
  }
  for (auto _ : state) {
    f.net.backward(f.grad, f.ws, f.theta, f.x, f.labels, 1.0f);
    benchmark::DoNotOptimize(f.grad.data());
  }
  state.SetLabel(std::string(s.name));
  state.counters["GFLOP/s"] = benchmark::Counter(4.0 * static_cast<double>(s.batch) * weights(s) * 1e-9,
                                                 benchmark::Counter::kIsIterationInvariantRate);
}

// TablePotential::minibatch: what one sampler step asks of the model.
void BM_MinibatchPotential(benchmark::State& state) {
  const Shape& s = kShapes[static_cast<std::size_t>(state.range(0))];
  const credence::ParamLayout layout = NetFixture::make_layout(s);
  const std::int64_t rows = 8192;
  credence::TrainingRows data;
  data.x = Eigen::MatrixXf::Random(s.inputs, rows);
  data.labels.resize(static_cast<std::size_t>(rows));
  for (std::size_t i = 0; i < data.labels.size(); ++i) {
    data.labels[i] = static_cast<std::int32_t>(i % static_cast<std::size_t>(s.classes));
  }
  auto potential = credence::TablePotential::create(data, layout, credence::PriorSpec{},
                                                    {.temperature = 1}, {.batch_rows = s.batch}, 3);
  if (!potential.ok()) {
    state.SkipWithError("TablePotential::create failed");
    return;
  }
  Eigen::VectorXf theta(layout.num_params), grad(layout.num_params);
  credence::initialize_params<float>(theta, layout, 7);
  credence::MinibatchValue value;
  for (auto _ : state) {
    auto status = (*potential)->minibatch(theta, grad, value);
    benchmark::DoNotOptimize(status);
    benchmark::DoNotOptimize(grad.data());
  }
  state.SetLabel(std::string(s.name));
  state.counters["GFLOP/s"] = benchmark::Counter(credence::bench::step_flops(s) * 1e-9,
                                                 benchmark::Counter::kIsIterationInvariantRate);
}

}  // namespace

BENCHMARK(BM_Forward)->DenseRange(0, 2)->Unit(benchmark::kMicrosecond);
BENCHMARK(BM_Backward)->DenseRange(0, 2)->Unit(benchmark::kMicrosecond);
BENCHMARK(BM_MinibatchPotential)->DenseRange(0, 2)->Unit(benchmark::kMicrosecond);
BENCHMARK_MAIN();
