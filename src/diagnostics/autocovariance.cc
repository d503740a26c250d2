// Autocovariance by FFT (docs/methods.md 10.2): O(n log n) instead of the direct O(n^2) sum.
#include <unsupported/Eigen/FFT>

#include <cmath>
#include <complex>
#include <limits>
#include <numeric>
#include <vector>

#include "credence/diagnostics.h"

namespace credence {

std::vector<double> autocovariance(std::span<const double> x) {
  const std::size_t n = x.size();
  if (n == 0) return {};
  const double mean = std::accumulate(x.begin(), x.end(), 0.0) / static_cast<double>(n);
  // Zero-padding to >= 2n keeps the circular correlation from wrapping onto itself.
  std::size_t padded = 1;
  while (padded < 2 * n) padded *= 2;
  std::vector<double> centred(padded, 0.0);
  for (std::size_t i = 0; i < n; ++i) centred[i] = x[i] - mean;

  Eigen::FFT<double> fft;
  std::vector<std::complex<double>> spectrum;
  fft.fwd(spectrum, centred);
  for (std::complex<double>& value : spectrum) value = std::norm(value);
  std::vector<double> lagged;
  fft.inv(lagged, spectrum);  // Eigen scales the inverse by 1/padded

  std::vector<double> acov(lagged.begin(), lagged.begin() + static_cast<std::ptrdiff_t>(n));
  for (double& value : acov) value /= static_cast<double>(n);
  return acov;
}

std::vector<double> autocorrelation(std::span<const double> x) {
  std::vector<double> acov = autocovariance(x);
  if (acov.empty()) return acov;
  const double zero_lag = acov[0];
  for (double& value : acov) {
    value = zero_lag > 0 ? value / zero_lag : std::numeric_limits<double>::quiet_NaN();
  }
  return acov;
}

}  // namespace credence
