// Seeded percentile-bootstrap intervals for NLL, Brier and ECE.
#include <cassert>
#include <cmath>
#include <vector>

#include "credence/metrics.h"
#include "util/rng.h"

namespace credence {
namespace {

// Uniform index in [0, n) without modulo bias: reject the lowest 2^64 mod n words, then
// reduce (the rejection happens with probability below n / 2^64).
std::size_t draw_index(Rng& rng, std::size_t n) {
  const std::uint64_t range = n;
  const std::uint64_t threshold = (0 - range) % range;  // 2^64 mod n
  for (;;) {
    const std::uint64_t x = rng.next_u64();
    if (x >= threshold) return static_cast<std::size_t>(x % range);
  }
}

Interval percentile_interval(const std::vector<double>& values, double level) {
  const double tail = 100.0 * (1.0 - level) / 2.0;
  return {percentile_linear(values, tail), percentile_linear(values, 100.0 - tail)};
}

}  // namespace

// Percentile bootstrap ("Bootstrap methods: another look at the jackknife", Annals of
// Statistics, 1979): resample the n rows with replacement B times, recompute each score,
// and report the (1 - level)/2 and (1 + level)/2 percentiles of the B values. Resample b
// draws from its own stream, mix_seed(seed, b), so the result does not depend on threads.
BootstrapIntervals bootstrap_intervals(ProbsRef log_probs, LabelSpan labels,
                                       const BootstrapSettings& settings) {
  assert(settings.resamples >= 1 && settings.level > 0 && settings.level < 1);
  assert(log_probs.cols() >= 1 && static_cast<std::size_t>(log_probs.cols()) == labels.size());
  const std::size_t n = labels.size();
  // Per-row pieces: each score is a mean of per-row terms, except ECE, which is rebinned.
  std::vector<double> row_nll(n), row_brier(n), conf(n);
  const std::vector<std::uint8_t> correct = correct_predictions(log_probs, labels);
  for (std::size_t i = 0; i < n; ++i) {
    const Eigen::Index c = static_cast<Eigen::Index>(i);
    row_nll[i] = -log_probs(labels[i], c);
    double brier = 0;
    for (Eigen::Index k = 0; k < log_probs.rows(); ++k) {
      const double d = std::exp(log_probs(k, c)) - (labels[i] == k ? 1.0 : 0.0);
      brier += d * d;
    }
    row_brier[i] = brier;
    conf[i] = std::min(1.0, std::exp(log_probs.col(c).maxCoeff()));
  }

  const int b_count = settings.resamples;
  std::vector<double> nll(static_cast<std::size_t>(b_count));
  std::vector<double> brier(nll.size());
  std::vector<double> ece(nll.size());
#pragma omp parallel
  {
    std::vector<double> conf_b(n);
    std::vector<std::uint8_t> correct_b(n);
#pragma omp for schedule(static)
    for (int b = 0; b < b_count; ++b) {
      Rng rng(mix_seed(settings.seed, static_cast<std::uint64_t>(b)));
      double nll_sum = 0;
      double brier_sum = 0;
      for (std::size_t j = 0; j < n; ++j) {
        const std::size_t i = draw_index(rng, n);
        nll_sum += row_nll[i];
        brier_sum += row_brier[i];
        conf_b[j] = conf[i];
        correct_b[j] = correct[i];
      }
      const std::size_t slot = static_cast<std::size_t>(b);
      nll[slot] = nll_sum / static_cast<double>(n);
      brier[slot] = brier_sum / static_cast<double>(n);
      ece[slot] =
          reliability_from_confidence(conf_b, correct_b, settings.ece_bins, settings.ece_binning)
              .ece;
    }
  }
  BootstrapIntervals out;
  out.resamples = b_count;
  out.nll = percentile_interval(nll, settings.level);
  out.brier = percentile_interval(brier, settings.level);
  out.ece = percentile_interval(ece, settings.level);
  return out;
}

}  // namespace credence
