// Gamma(shape, rate) by squeeze-and-reject on a transformed normal (see gamma.h).
#include "util/gamma.h"

#include <cassert>
#include <cmath>

namespace credence {

double gamma_draw(Rng& rng, double shape, double rate) {
  assert(shape > 0 && rate > 0 && std::isfinite(shape) && std::isfinite(rate));
  if (shape < 1) {
    const double boost = std::pow(1.0 - rng.uniform(), 1.0 / shape);  // U in (0, 1]
    return gamma_draw(rng, shape + 1, rate) * boost;
  }
  const double d = shape - 1.0 / 3.0;
  const double c = 1.0 / std::sqrt(9.0 * d);
  for (;;) {
    const double z = rng.normal();
    const double t = 1.0 + c * z;
    if (t <= 0) continue;
    const double v = t * t * t;
    const double u = 1.0 - rng.uniform();  // (0, 1]
    if (u < 1.0 - 0.0331 * z * z * z * z) return d * v / rate;
    if (std::log(u) < 0.5 * z * z + d * (1.0 - v + std::log(v))) return d * v / rate;
  }
}

}  // namespace credence
