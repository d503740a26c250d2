// Relativistic layout, speed-ratio tables and the per-coordinate momentum slice sampler.
#include "samplers/relativistic.h"

#include <algorithm>
#include <cmath>

namespace credence::samplers {

RelativisticLayout build_relativistic_layout(const RelativisticSettings& settings,
                                             std::int64_t parameters, double eps,
                                             double temperature) {
  const double default_speed = settings.speed > 0 ? settings.speed : settings.max_move / eps;
  auto derive_mass = [&](double speed) {
    if (temperature <= 0) return 1.0;
    return u_for_speed_ratio(settings.target_speed_ratio) * temperature / (speed * speed);
  };
  const double default_mass = settings.mass > 0 ? settings.mass : derive_mass(default_speed);

  RelativisticLayout layout;
  layout.mass = Eigen::VectorXf::Constant(parameters, static_cast<float>(default_mass));
  layout.speed = Eigen::VectorXf::Constant(parameters, static_cast<float>(default_speed));
  if (settings.joint) {
    layout.ranges.push_back({0, parameters, 0});
    layout.groups = 1;
    return layout;
  }
  std::vector<RelativisticSlice> slices = settings.slices;
  std::sort(slices.begin(), slices.end(),
            [](const auto& a, const auto& b) { return a.offset < b.offset; });
  int group = 0;
  std::int64_t cursor = 0;
  const int rest_group = static_cast<int>(slices.size());
  bool rest_used = false;
  for (const RelativisticSlice& slice : slices) {
    if (slice.offset > cursor) {
      layout.ranges.push_back({cursor, slice.offset - cursor, rest_group});
      rest_used = true;
    }
    const double speed = slice.speed > 0 ? slice.speed : default_speed;
    const double mass =
        slice.mass > 0 ? slice.mass : (settings.mass > 0 ? settings.mass : derive_mass(speed));
    layout.speed.segment(slice.offset, slice.length).setConstant(static_cast<float>(speed));
    layout.mass.segment(slice.offset, slice.length).setConstant(static_cast<float>(mass));
    layout.ranges.push_back({slice.offset, slice.length, group++});
    cursor = slice.offset + slice.length;
  }
  if (cursor < parameters) {
    layout.ranges.push_back({cursor, parameters - cursor, rest_group});
    rest_used = true;
  }
  layout.groups = rest_group + (rest_used ? 1 : 0);
  return layout;
}

double mean_speed_ratio(double u) {
  // Numerator: integral of |x|/s e^{-u s} dx with s = sqrt(1 + x^2) is 2 e^{-u} / u;
  // denominator: integral of e^{-u s} dx is 2 K_1(u).
  return std::exp(-u) / (u * std::cyl_bessel_k(1.0, u));
}

double u_for_speed_ratio(double ratio) {
  double lo = std::log(1e-6), hi = std::log(1e6);  // ratio falls as u grows
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (lo + hi);
    if (mean_speed_ratio(std::exp(mid)) > ratio) {
      lo = mid;
    } else {
      hi = mid;
    }
  }
  return std::exp(0.5 * (lo + hi));
}

void refresh_relativistic_momentum(Eigen::VectorXf& p, const Eigen::VectorXf& mass,
                                   const Eigen::VectorXf& speed, double temperature, Rng& rng) {
  for (Eigen::Index i = 0; i < p.size(); ++i) {
    const double c = speed[i];
    const double mc = static_cast<double>(mass[i]) * c;
    // level / c = sqrt(p^2 + m^2 c^2) + T E / c = m c + e, so the slice half-width is
    // P = sqrt((m c + e)^2 - (m c)^2) = sqrt(e (2 m c + e)), with no cancellation.
    const double pi = p[i];
    const double e =
        pi * pi / (std::sqrt(pi * pi + mc * mc) + mc) + temperature * rng.exponential() / c;
    const double half_width = std::sqrt(e * (2 * mc + e));
    p[i] = static_cast<float>((2 * rng.uniform() - 1) * half_width);
  }
}

}  // namespace credence::samplers
