// Evidence updates of block precisions for optimizers (docs/methods.md section 15).
#include "posterior/precision_evidence.h"

#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <numeric>
#include <string>

#include "util/rng.h"

namespace credence {

double evidence_precision_target(std::span<const double> h, double lambda, double norm2) {
  assert(lambda > 0);
  double gamma = 0;
  for (double hi : h) gamma += hi / (hi + lambda);
  if (!(norm2 > 0)) return std::numeric_limits<double>::infinity();
  return gamma / norm2;
}

double evidence_precision_step(double lambda, double target, double upper) {
  using E = PrecisionEvidence;
  const double hi = std::max(E::kMinPrecision, std::min(E::kMaxPrecision, upper));
  const double clipped = std::clamp(target, E::kMinPrecision, hi);
  const double moved =
      std::exp(std::log(lambda) + E::kLogStep * (std::log(clipped) - std::log(lambda)));
  return std::clamp(moved, E::kMinPrecision, hi);
}

namespace {

std::int64_t steps_of(double passes, std::int64_t per_pass, std::int64_t floor) {
  const auto steps = static_cast<std::int64_t>(std::ceil(passes * static_cast<double>(per_pass)));
  return std::max(floor, steps);
}

}  // namespace

PrecisionEvidence::PrecisionEvidence(const ParamLayout& layout, std::span<const double> upper,
                                     std::int64_t rows_n, std::int64_t steps_per_pass,
                                     std::uint64_t seed)
    : seed_(seed),
      upper_(upper.begin(), upper.end()),
      warmup_(steps_of(kWarmupPasses, steps_per_pass, kWarmupFloor)),
      every_(steps_of(kEveryPasses, steps_per_pass, kEveryFloor)),
      network_(layout),
      workspace_(layout, 1),
      log_lik_(1),
      grad_(layout.num_params),
      h_(static_cast<std::size_t>(layout.num_params)),
      next_(2 * layout.layers.size()) {
  assert(rows_n >= 1);
  // A fixed seeded subset: the first m of a partial Fisher-Yates shuffle of 0..N-1.
  std::vector<std::int64_t> all(static_cast<std::size_t>(rows_n));
  std::iota(all.begin(), all.end(), std::int64_t{0});
  const std::int64_t m = std::min(rows_n, kSubsetRows);
  Rng rng(stream_seed(seed, SeedPurpose::kGibbs, 0));
  for (std::int64_t i = 0; i < m; ++i) {
    const auto left = static_cast<std::uint64_t>(rows_n - i);
    const auto j = i + static_cast<std::int64_t>(rng.next_u64() % left);
    std::swap(all[static_cast<std::size_t>(i)], all[static_cast<std::size_t>(j)]);
  }
  subset_.assign(all.begin(), all.begin() + m);
  std::sort(subset_.begin(), subset_.end());
  n_over_m_ = static_cast<double>(rows_n) / static_cast<double>(m);
}

Status PrecisionEvidence::update(ConstVecRef<float> theta, const Eigen::MatrixXf& x,
                                 std::int64_t step, Potential<float>& potential) {
  // The label draws of this update: a stream of the chain's seed and the step, so no
  // random state needs saving.
  Rng rng(stream_seed(seed_, SeedPurpose::kGibbs, 1 + static_cast<std::uint64_t>(step)));
  std::fill(h_.begin(), h_.end(), 0.0);
  const Index classes = network_.layout().num_classes;
  for (std::int64_t col : subset_) {
    ConstMatRef<float> row = x.middleCols(static_cast<Index>(col), 1);
    CREDENCE_RETURN_IF_ERROR(network_.forward(workspace_, theta, row));
    // y~ ~ softmax(logits): inverse CDF on one uniform.
    const double u = rng.uniform();
    double cdf = 0;
    std::int32_t label = static_cast<std::int32_t>(classes - 1);
    for (Index k = 0; k < classes; ++k) {
      cdf += std::exp(static_cast<double>(workspace_.log_probs()(k, 0)));
      if (u < cdf) {
        label = static_cast<std::int32_t>(k);
        break;
      }
    }
    const std::span<const std::int32_t> labels(&label, 1);
    Result<double> ll = network_.log_likelihood(log_lik_, workspace_, labels);
    if (!ll.ok()) return ll.status();
    grad_.setZero();
    network_.backward(grad_, workspace_, theta, row, labels, 1.0f);
    for (Index i = 0; i < grad_.size(); ++i) {
      const double g = grad_[i];
      h_[static_cast<std::size_t>(i)] += g * g;
    }
  }
  for (double& hi : h_) hi *= n_over_m_;

  const GaussianPrior& prior = potential.prior();
  const std::span<const double> now = prior.block_precisions();
  assert(next_.size() == now.size());  // 2 blocks per layer, sized at construction
  for (Index b = 0; b < prior.num_blocks(); ++b) {
    const auto bi = static_cast<std::size_t>(b);
    const std::span<const double> hb(h_.data() + prior.block_offset(b),
                                     static_cast<std::size_t>(prior.block_size(b)));
    const double target =
        evidence_precision_target(hb, now[bi], prior.block_squared_norm<float>(theta, b));
    next_[bi] = upper_.empty() ? evidence_precision_step(now[bi], target)
                               : evidence_precision_step(now[bi], target, upper_[bi]);
  }
  // A non-finite theta gives non-finite values; the prior then keeps its precisions and
  // the optimizer reports the divergence.
  (void)potential.set_block_precisions(next_);
  return Status::ok_status();
}

void PrecisionEvidence::save_state(const GaussianPrior& prior, NamedArrays& out) {
  const std::span<const double> now = prior.block_precisions();
  out.doubles["prior_precision"] = std::vector<double>(now.begin(), now.end());
}

Status PrecisionEvidence::restore_state(const NamedArrays& in, Potential<float>& potential) {
  auto precision = in.doubles.find("prior_precision");
  if (precision == in.doubles.end()) {
    return Status::corrupt(
        "the model state lacks 'prior_precision' although the prior learns its scale; the "
        "checkpoint is damaged or was written with a fixed prior");
  }
  if (!potential.set_block_precisions(precision->second)) {
    return Status::corrupt("the model state's 'prior_precision' does not hold " +
                           std::to_string(potential.prior().num_blocks()) +
                           " positive precisions");
  }
  return Status::ok_status();
}

}  // namespace credence
