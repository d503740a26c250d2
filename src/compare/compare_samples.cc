// default_compare_samples: kept samples per chain that let R-hat resolve 1.01.
#include "compare/compare_samples.h"

#include <fmt/format.h>

#include <algorithm>

namespace credence {

std::int64_t dense_parameters(std::int64_t input_width, const std::vector<Index>& hidden,
                              int classes, bool linear_path) {
  std::int64_t total = 0;
  if (linear_path && !hidden.empty()) total += (input_width + 1) * classes;
  std::int64_t in = input_width;
  for (Index width : hidden) {
    total += (in + 1) * static_cast<std::int64_t>(width);
    in = width;
  }
  return total + (in + 1) * classes;
}

CompareSamples default_compare_samples(std::int64_t parameters, int chains) {
  CompareSamples out{kCompareRhatDraws, {}};
  if (parameters <= 0 || chains < 1) return out;
  const std::int64_t per_sample = parameters * chains * 4;
  const std::int64_t fit = std::max<std::int64_t>(1, kCompareSampleBytes / per_sample);
  if (fit < out.samples) {
    out.samples = fit;
    out.note = fmt::format(
        "samplers keep {} samples per chain, not {}: {} parameters x {} chains would pass {} MiB "
        "per run file; R-hat over the probe rows is then coarser (give --samples to choose)",
        fit, kCompareRhatDraws, parameters, chains, kCompareSampleBytes >> 20);
  }
  return out;
}

}  // namespace credence
