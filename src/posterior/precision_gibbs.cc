// Gibbs draws of block precisions (docs/methods.md section 15).
#include "posterior/precision_gibbs.h"

#include <cassert>
#include <cmath>

#include "util/gamma.h"

namespace credence {

GammaShapeRate precision_conditional(double a, double r, double d, double norm2,
                                     double temperature, Tempering tempering) {
  const double shape = a + d / 2;
  const double rate = r + norm2 / 2;
  if (tempering == Tempering::kLikelihoodOnly || temperature == 1.0) return {shape, rate};
  assert(temperature > 0);
  return {(shape - 1) / temperature + 1, rate / temperature};
}

PrecisionGibbs::PrecisionGibbs(const PriorSpec& spec, const GaussianPrior& prior,
                               std::int64_t every_steps, double temperature,
                               Tempering tempering, std::uint64_t seed)
    : shape_(spec.hyper_shape),
      every_(every_steps < 1 ? 1 : every_steps),
      temperature_(temperature),
      tempering_(tempering),
      rng_(seed),
      drawn_(static_cast<std::size_t>(prior.num_blocks())) {
  const std::span<const double> start = prior.block_precisions();
  rates_.resize(start.size());
  for (std::size_t b = 0; b < start.size(); ++b) {
    rates_[b] = spec.hyper_rate ? *spec.hyper_rate : shape_ / start[b];
  }
}

template <typename S>
void PrecisionGibbs::draw(ConstVecRef<S> theta, Potential<S>& potential) {
  const GaussianPrior& prior = potential.prior();
  for (Index b = 0; b < prior.num_blocks(); ++b) {
    const auto i = static_cast<std::size_t>(b);
    const GammaShapeRate g = precision_conditional(
        shape_, rates_[i], static_cast<double>(prior.block_size(b)),
        prior.block_squared_norm<S>(theta, b), temperature_, tempering_);
    // A diverged theta (a non-finite squared norm) has no conditional to draw from: the
    // block keeps its precision and the sampler reports the divergence. (gamma_draw
    // requires a finite positive rate; an assertion stopped the process here.)
    drawn_[i] = std::isfinite(g.rate) && g.rate > 0 ? gamma_draw(rng_, g.shape, g.rate)
                                                    : prior.block_precisions()[i];
  }
  (void)potential.set_block_precisions(drawn_);
}

void PrecisionGibbs::save_state(const GaussianPrior& prior, NamedArrays& out) const {
  out.words["prior_rng"] = rng_.state();
  const std::span<const double> now = prior.block_precisions();
  out.doubles["prior_precision"] = std::vector<double>(now.begin(), now.end());
}

template <typename S>
Status PrecisionGibbs::restore_state(const NamedArrays& in, Potential<S>& potential) {
  auto rng = in.words.find("prior_rng");
  auto precision = in.doubles.find("prior_precision");
  if (rng == in.words.end() || precision == in.doubles.end()) {
    return Status::corrupt(
        "the model state lacks 'prior_rng' or 'prior_precision' although the prior learns "
        "its scale; the checkpoint is damaged or was written with a fixed prior");
  }
  Rng restored = rng_;
  if (!restored.set_state(rng->second)) {
    return Status::corrupt("the model state's 'prior_rng' is not a valid random stream");
  }
  if (!potential.set_block_precisions(precision->second)) {
    return Status::corrupt("the model state's 'prior_precision' does not hold " +
                           std::to_string(potential.prior().num_blocks()) +
                           " positive precisions");
  }
  rng_ = restored;
  return Status::ok_status();
}

template void PrecisionGibbs::draw<float>(ConstVecRef<float>, Potential<float>&);
template void PrecisionGibbs::draw<double>(ConstVecRef<double>, Potential<double>&);
template Status PrecisionGibbs::restore_state<float>(const NamedArrays&, Potential<float>&);
template Status PrecisionGibbs::restore_state<double>(const NamedArrays&, Potential<double>&);

}  // namespace credence
