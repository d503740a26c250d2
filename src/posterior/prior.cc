// Gaussian prior with per-layer scales, fan-in scaling and a separate bias scale.
#include <cassert>
#include <cmath>
#include <numbers>
#include <string>

#include "credence/posterior.h"

namespace credence {
namespace {

double block_log_normaliser(Index size, double sigma) {
  return 0.5 * static_cast<double>(size) * std::log(2.0 * std::numbers::pi * sigma * sigma);
}

// Sum of squares in double over 8 lanes the compiler keeps in one vector register:
// float sums over a million weights lose digits, and Eigen's cast<double>() reduction
// runs one coordinate at a time.
template <typename S>
double squared_norm(const S* __restrict x, Index n) {
  constexpr Index kLanes = 8;
  double lanes[kLanes] = {};
  Index i = 0;
  for (; i + kLanes <= n; i += kLanes) {
    for (Index j = 0; j < kLanes; ++j) {
      const auto v = static_cast<double>(x[i + j]);
      lanes[j] += v * v;
    }
  }
  for (Index j = 0; i < n; ++i, ++j) {
    const auto v = static_cast<double>(x[i]);
    lanes[j] += v * v;
  }
  double total = 0;
  for (double lane : lanes) total += lane;
  return total;
}

}  // namespace

double gaussian_neg_log_density(ConstVecRef<double> theta, double sigma) {
  return theta.squaredNorm() / (2.0 * sigma * sigma) + block_log_normaliser(theta.size(), sigma);
}

GaussianPrior::GaussianPrior(ParamLayout layout, std::vector<LayerPriorSigma> sigmas)
    : layout_(std::move(layout)), sigmas_(std::move(sigmas)) {
  for (std::size_t l = 0; l < layout_.layers.size(); ++l) {
    const LayerLayout& layer = layout_.layers[l];
    log_normaliser_ += block_log_normaliser(layer.out * layer.in, sigmas_[l].weight_sigma) +
                       block_log_normaliser(layer.out, sigmas_[l].bias_sigma);
  }
}

Result<GaussianPrior> GaussianPrior::create(const PriorSpec& spec, const ParamLayout& layout) {
  NetSpec check;
  check.prior = spec;
  // Overrides are checked against the layout's layer count: widths are placeholders.
  check.hidden.assign(layout.layers.size() - 1, HiddenLayerSpec{1, Activation::kIdentity});
  CREDENCE_RETURN_IF_ERROR(validate_net_spec(check));
  std::vector<LayerPriorSigma> sigmas(layout.layers.size());
  for (std::size_t l = 0; l < layout.layers.size(); ++l) {
    double scale = spec.weight_scale;
    double bias_scale = spec.bias_scale;
    for (const LayerPriorOverride& over : spec.overrides) {
      if (over.layer != static_cast<int>(l)) continue;
      if (over.weight_scale) scale = *over.weight_scale;
      if (over.bias_scale) bias_scale = *over.bias_scale;
    }
    const double fan_in = static_cast<double>(layout.layers[l].in);
    sigmas[l].weight_sigma = spec.fan_in_scaling ? scale / std::sqrt(fan_in) : scale;
    sigmas[l].bias_sigma = bias_scale;
  }
  return GaussianPrior(layout, std::move(sigmas));
}

template <typename S>
double GaussianPrior::neg_log_density(ConstVecRef<S> theta) const {
  assert(theta.size() == layout_.num_params);
  double quadratic = 0;
  for (std::size_t l = 0; l < layout_.layers.size(); ++l) {
    const LayerLayout& layer = layout_.layers[l];
    const double w_norm2 =
        squared_norm(theta.data() + layer.weight_offset, layer.out * layer.in);
    const double b_norm2 = squared_norm(theta.data() + layer.bias_offset, layer.out);
    const double w_sigma = sigmas_[l].weight_sigma;
    const double b_sigma = sigmas_[l].bias_sigma;
    quadratic += w_norm2 / (2.0 * w_sigma * w_sigma) + b_norm2 / (2.0 * b_sigma * b_sigma);
  }
  return quadratic + log_normaliser_;
}

template <typename S>
void GaussianPrior::add_gradient(VecRef<S> grad, ConstVecRef<S> theta) const {
  assert(theta.size() == layout_.num_params && grad.size() == layout_.num_params);
  for (std::size_t l = 0; l < layout_.layers.size(); ++l) {
    const LayerLayout& layer = layout_.layers[l];
    const Index w_size = layer.out * layer.in;
    const auto w_precision = static_cast<S>(1.0 / (sigmas_[l].weight_sigma *
                                                   sigmas_[l].weight_sigma));
    const auto b_precision = static_cast<S>(1.0 / (sigmas_[l].bias_sigma *
                                                   sigmas_[l].bias_sigma));
    grad.segment(layer.weight_offset, w_size) +=
        w_precision * theta.segment(layer.weight_offset, w_size);
    grad.segment(layer.bias_offset, layer.out) +=
        b_precision * theta.segment(layer.bias_offset, layer.out);
  }
}

VecX<double> GaussianPrior::coordinate_sigmas() const {
  VecX<double> sigma(layout_.num_params);
  for (std::size_t l = 0; l < layout_.layers.size(); ++l) {
    const LayerLayout& layer = layout_.layers[l];
    sigma.segment(layer.weight_offset, layer.out * layer.in).setConstant(sigmas_[l].weight_sigma);
    sigma.segment(layer.bias_offset, layer.out).setConstant(sigmas_[l].bias_sigma);
  }
  return sigma;
}

template double GaussianPrior::neg_log_density<float>(ConstVecRef<float>) const;
template double GaussianPrior::neg_log_density<double>(ConstVecRef<double>) const;
template void GaussianPrior::add_gradient<float>(VecRef<float>, ConstVecRef<float>) const;
template void GaussianPrior::add_gradient<double>(VecRef<double>, ConstVecRef<double>) const;

}  // namespace credence
