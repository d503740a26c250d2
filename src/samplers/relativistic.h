// Relativistic kinetic energy pieces shared by rsghmc and rhmc: per-coordinate
// masses and speeds from the settings, velocity, energy, and momentum refresh.
#pragma once

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <vector>

#include "credence/samplers_settings.h"
#include "util/rng.h"

namespace credence::samplers {

/// A contiguous range of coordinates and the adaptation group it belongs to.
struct CoordinateRange {
  std::int64_t offset = 0;
  std::int64_t length = 0;
  int group = 0;
};

/// Per-coordinate m and c, and the ranges that cover theta (one group per slice of
/// the settings, plus one for the coordinates outside every slice).
struct RelativisticLayout {
  Eigen::VectorXf mass;   // (P)
  Eigen::VectorXf speed;  // (P)
  std::vector<CoordinateRange> ranges;
  int groups = 0;
};

/// Builds the layout for P coordinates with time step eps and temperature T
/// (docs/methods.md 5.6): c = max_move / eps, m = u* T / c^2 (m = 1 at T = 0) unless
/// given. REQUIRES: validate() accepted the slices.
RelativisticLayout build_relativistic_layout(const RelativisticSettings& settings,
                                             std::int64_t parameters, double eps,
                                             double temperature);

/// E|v|/c of the per-coordinate momentum marginal at u = m c^2 / T [D]:
/// exp(-u) / (u K_1(u)). Matches docs/methods.md 5.2's table.
double mean_speed_ratio(double u);
/// The u with mean_speed_ratio(u) = ratio, by bisection on log u.
/// REQUIRES: 0 < ratio < 1.
double u_for_speed_ratio(double ratio);

/// v = c p / hypot(p, m c), computed in double so no float overflows; |v| <= c.
inline float relativistic_velocity(float p, float m, float c) {
  const double pd = p;
  const double mc = static_cast<double>(m) * c;
  return static_cast<float>(static_cast<double>(c) * (pd / std::sqrt(pd * pd + mc * mc)));
}

/// v / c = x / sqrt(1 + x^2) at x = p / (m c), in float: |x| is capped at 1e18 first so
/// x^2 cannot overflow (the ratio is exactly +-1 there already). Vectorises in loops.
inline float relativistic_speed_fraction(float x) {
  constexpr float kCap = 1e18f;
  const float xc = std::min(std::max(x, -kCap), kCap);
  return xc / std::sqrt(xc * xc + 1.0f);
}

/// K_i - m c^2 = m c^2 x^2 / (sqrt(1 + x^2) + 1), x = p / (m c), without cancellation.
inline double relativistic_kinetic_excess(double p, double m, double c) {
  const double mc = m * c;
  return c * p * p / (std::sqrt(p * p + mc * mc) + mc);
}

/// One closed-form slice-sampling sweep per coordinate (docs/methods.md 5.2): leaves
/// exp(-K(p)/T) invariant. p, mass, speed: (P).
void refresh_relativistic_momentum(Eigen::VectorXf& p, const Eigen::VectorXf& mass,
                                   const Eigen::VectorXf& speed, double temperature, Rng& rng);

}  // namespace credence::samplers
