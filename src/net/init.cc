// Seeded He / Glorot initialisation of the flat parameter vector.
#include <cassert>
#include <cmath>
#include <numbers>
#include <random>

#include "credence/net.h"

namespace credence {
namespace {

// The standard library fixes mt19937_64's output sequence but not how its distributions
// use it, so the draws below are spelled out to give the same theta on every platform.
double uniform_open(std::mt19937_64& engine) {
  // 53 random bits, shifted by half a unit so the result lies in (0, 1).
  return (static_cast<double>(engine() >> 11) + 0.5) * 0x1.0p-53;
}

double standard_normal(std::mt19937_64& engine) {
  // Box-Muller, one draw per pair (initialisation is not on the hot path).
  const double u1 = uniform_open(engine);
  const double u2 = uniform_open(engine);
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
}

bool uses_he(Activation activation) {
  return activation == Activation::kRelu || activation == Activation::kSoftplus;
}

}  // namespace

template <typename S>
void initialize_params(VecRef<S> theta, const ParamLayout& layout, std::uint64_t seed) {
  assert(theta.size() == layout.num_params);
  std::mt19937_64 engine(seed);
  for (std::size_t l = 0; l < layout.layers.size(); ++l) {
    const LayerLayout& layer = layout.layers[l];
    const Index count = layer.out * layer.in;
    if (layout.linear_path && l + 1 == layout.layers.size()) {
      // The linear path starts at zero: the network starts as it would without one.
      theta.segment(layer.weight_offset, count + layer.out).setZero();
      continue;
    }
    if (uses_he(layer.activation)) {
      // He: N(0, 2 / fan_in).
      const double stddev = std::sqrt(2.0 / static_cast<double>(layer.in));
      for (Index i = 0; i < count; ++i) {
        theta(layer.weight_offset + i) = static_cast<S>(stddev * standard_normal(engine));
      }
    } else {
      // Glorot: U(-a, a) with a = sqrt(6 / (fan_in + fan_out)).
      const double limit = std::sqrt(6.0 / static_cast<double>(layer.in + layer.out));
      for (Index i = 0; i < count; ++i) {
        theta(layer.weight_offset + i) =
            static_cast<S>(limit * (2.0 * uniform_open(engine) - 1.0));
      }
    }
    theta.segment(layer.bias_offset, layer.out).setZero();
  }
}

template void initialize_params<float>(VecRef<float>, const ParamLayout&, std::uint64_t);
template void initialize_params<double>(VecRef<double>, const ParamLayout&, std::uint64_t);

}  // namespace credence
