// Gamma draws on the samplers' Rng, for the Gibbs updates of prior precisions.
//
// Parameters are (shape, rate): the density is rate^shape x^(shape-1) e^(-rate x) / Gamma(shape),
// mean shape/rate. (std::gamma_distribution and numpy take a scale = 1/rate; this does not.)
// The draw uses only Rng::uniform() and Rng::normal(), which keep no hidden state, so a
// restored Rng continues the same stream bit for bit.
#pragma once

#include "util/rng.h"

namespace credence {

/// One Gamma(shape, rate) draw by "A simple method for generating gamma variables"
/// (ACM Transactions on Mathematical Software, 2000); shape < 1 through the boost
/// Gamma(shape) = Gamma(shape + 1) U^(1/shape) given in the same paper.
/// REQUIRES: shape > 0, rate > 0, both finite.
double gamma_draw(Rng& rng, double shape, double rate);

}  // namespace credence
