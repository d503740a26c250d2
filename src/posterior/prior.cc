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
  precisions_.resize(2 * sigmas_.size());
  for (std::size_t l = 0; l < sigmas_.size(); ++l) {
    precisions_[2 * l] = 1.0 / (sigmas_[l].weight_sigma * sigmas_[l].weight_sigma);
    precisions_[2 * l + 1] = 1.0 / (sigmas_[l].bias_sigma * sigmas_[l].bias_sigma);
  }
  update_log_normaliser();
}

// sum over blocks of (d/2) log(2 pi / lambda)
void GaussianPrior::update_log_normaliser() {
  log_normaliser_ = 0;
  for (Index b = 0; b < num_blocks(); ++b) {
    log_normaliser_ += 0.5 * static_cast<double>(block_size(b)) *
                       std::log(2.0 * std::numbers::pi / precisions_[static_cast<std::size_t>(b)]);
  }
}

Index GaussianPrior::block_offset(Index block) const {
  const LayerLayout& layer = layout_.layers[static_cast<std::size_t>(block / 2)];
  return block % 2 == 0 ? layer.weight_offset : layer.bias_offset;
}

Index GaussianPrior::block_size(Index block) const {
  const LayerLayout& layer = layout_.layers[static_cast<std::size_t>(block / 2)];
  return block % 2 == 0 ? layer.out * layer.in : layer.out;
}

template <typename S>
double GaussianPrior::block_squared_norm(ConstVecRef<S> theta, Index block) const {
  assert(theta.size() == layout_.num_params && block >= 0 && block < num_blocks());
  return squared_norm(theta.data() + block_offset(block), block_size(block));
}

bool GaussianPrior::set_block_precisions(std::span<const double> precisions) {
  if (precisions.size() != precisions_.size()) return false;
  for (double p : precisions) {
    if (!(std::isfinite(p) && p > 0)) return false;
  }
  precisions_.assign(precisions.begin(), precisions.end());
  update_log_normaliser();
  return true;
}

Result<GaussianPrior> GaussianPrior::create(const PriorSpec& spec, const ParamLayout& layout) {
  NetSpec check;
  check.prior = spec;
  // Overrides are checked against the layout's layer count: widths are placeholders.
  check.hidden.assign(layout.chain_size() - 1, HiddenLayerSpec{1, Activation::kIdentity});
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
  for (Index b = 0; b < num_blocks(); ++b) {
    quadratic += 0.5 * precisions_[static_cast<std::size_t>(b)] * block_squared_norm<S>(theta, b);
  }
  return quadratic + log_normaliser_;
}

template <typename S>
void GaussianPrior::add_gradient(VecRef<S> grad, ConstVecRef<S> theta) const {
  assert(theta.size() == layout_.num_params && grad.size() == layout_.num_params);
  for (Index b = 0; b < num_blocks(); ++b) {
    const auto precision = static_cast<S>(precisions_[static_cast<std::size_t>(b)]);
    const Index offset = block_offset(b);
    const Index size = block_size(b);
    grad.segment(offset, size) += precision * theta.segment(offset, size);
  }
}

VecX<double> GaussianPrior::coordinate_sigmas() const {
  VecX<double> sigma(layout_.num_params);
  for (Index b = 0; b < num_blocks(); ++b) {
    sigma.segment(block_offset(b), block_size(b))
        .setConstant(1.0 / std::sqrt(precisions_[static_cast<std::size_t>(b)]));
  }
  return sigma;
}

template double GaussianPrior::neg_log_density<float>(ConstVecRef<float>) const;
template double GaussianPrior::neg_log_density<double>(ConstVecRef<double>) const;
template void GaussianPrior::add_gradient<float>(VecRef<float>, ConstVecRef<float>) const;
template void GaussianPrior::add_gradient<double>(VecRef<double>, ConstVecRef<double>) const;

template double GaussianPrior::block_squared_norm<float>(ConstVecRef<float>, Index) const;
template double GaussianPrior::block_squared_norm<double>(ConstVecRef<double>, Index) const;

}  // namespace credence
