// How many samples compare keeps per sampler chain when --samples is not given: enough
// that R-hat can resolve its 1.01 threshold over every probe row at once.
//
// The predictions check (run_verdict.h) takes the largest R-hat over the probe rows'
// probabilities and the probe log-likelihood (257 summaries at the default 256 probe
// rows), each the larger of bulk and folded R-hat. With n draws per chain that are
// truly independent and from one distribution, each R-hat is about 1 + (X - 1) / n with
// X a chi-squared over its degrees of freedom, so the largest of hundreds sits well above
// 1: measured with tests/tools/numpy_rhat.py on 4 chains of independent normal draws (257
// summaries sharing half their variance; medians of 10 repeats), 100 draws per chain give
// a largest R-hat of 1.027, 200 give 1.011, 400 give 1.006 and 800 give 1.003. So at the
// old 100 a perfectly mixed run could never pass; 400 leaves room for draws that are
// not quite independent.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "credence/net.h"

namespace credence {

/// Kept samples per chain compare gives a sampler by default (see above).
inline constexpr std::int64_t kCompareRhatDraws = 400;
/// ... unless the kept samples of one run file would pass this many bytes (float32 per
/// parameter, all chains); then as many as fit, and compare says so.
inline constexpr std::int64_t kCompareSampleBytes = std::int64_t{256} << 20;

/// Weights and biases of a dense network of these widths (output layer: `classes` units),
/// with a linear path's (input_width + 1) x classes when `linear_path` and hidden layers.
std::int64_t dense_parameters(std::int64_t input_width, const std::vector<Index>& hidden,
                              int classes, bool linear_path = false);

struct CompareSamples {
  std::int64_t samples = 0;
  std::string note;  // why fewer than kCompareRhatDraws, or empty
};

/// kCompareRhatDraws, cut so that samples x chains x parameters x 4 bytes stays within
/// kCompareSampleBytes (at least 1). `parameters` <= 0: unknown, not cut.
CompareSamples default_compare_samples(std::int64_t parameters, int chains);

}  // namespace credence
