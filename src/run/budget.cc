// Table-sized default budgets (budget.h).
#include "credence/budget.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

namespace credence {
namespace {

using D = BudgetDefaults;

// max(floor, passes * per_pass), capped; the cap never goes below the floor.
std::int64_t in_passes(double passes, std::int64_t per_pass, std::int64_t floor, std::int64_t cap) {
  const auto steps = static_cast<std::int64_t>(std::ceil(passes * static_cast<double>(per_pass)));
  return std::min(std::max(floor, steps), std::max(floor, cap));
}

std::string passes_text(std::int64_t steps, std::int64_t per_pass) {
  return fmt::format("{} steps = {:.3g} passes", steps,
                     static_cast<double>(steps) / static_cast<double>(per_pass));
}

}  // namespace

std::int64_t sampler_floor_steps(std::int64_t train_rows, std::int64_t base_floor) {
  const std::int64_t rows = std::max<std::int64_t>(1, train_rows);
  const std::int64_t small = D::kSamplerSmallTableFloor * D::kSamplerSmallTableRows;
  const std::int64_t floor = (small + rows - 1) / rows;
  return std::clamp(floor, std::min(base_floor, D::kSamplerSmallTableFloor),
                    std::max(base_floor, D::kSamplerSmallTableFloor));
}

std::int64_t steps_per_pass(std::int64_t train_rows, std::int64_t batch_rows) {
  const std::int64_t rows = std::max<std::int64_t>(1, train_rows);
  const std::int64_t batch = std::clamp<std::int64_t>(batch_rows, 1, rows);
  return (rows + batch - 1) / batch;
}

std::string size_budget(TrainSettings& s, std::int64_t train_rows, const BudgetGiven& given) {
  const std::int64_t per_pass = steps_per_pass(train_rows, s.batches.batch_rows);
  if (!is_sampler(s.sampler.method)) {
    if (given.steps || given.epochs) return {};
    s.steps = in_passes(D::kOptimizerPasses, per_pass, D::kOptimizerFloor, D::kOptimizerCap);
    return fmt::format(
        "budget sized to {} training rows ({} steps per pass): at most {} (default: "
        "max({} steps, {:g} passes), at most {})",
        train_rows, per_pass, passes_text(s.steps, per_pass), D::kOptimizerFloor,
        D::kOptimizerPasses, D::kOptimizerCap);
  }
  ChainSettings& c = s.chains;
  if (is_full_batch(s.sampler.method)) {
    // hmc and rhmc read every row in each of their L leapfrog steps, and their
    // Metropolis-corrected iterations mix far faster than minibatch steps: one
    // iteration is already L passes, so their budget is iterations, not passes.
    if (!given.burn_in) c.burn_in = D::kFullBatchBurnIn;
    if (!given.thin) {
      const std::int64_t samples = std::max<std::int64_t>(1, c.samples);
      c.thin = std::max<std::int64_t>(1, (D::kFullBatchSampling + samples - 1) / samples);
    }
    if (given.burn_in && given.thin) return {};
    return fmt::format("budget for {}: burn-in {} iterations, then {} samples thinned 1 in {}",
                       method_name(s.sampler.method), c.burn_in, c.samples, c.thin);
  }
  if (!given.burn_in) {
    c.burn_in = in_passes(D::kSamplerBurnInPasses, per_pass,
                          sampler_floor_steps(train_rows, D::kSamplerBurnInFloor),
                          D::kSamplerPhaseCap);
  }
  if (!given.thin) {
    const std::int64_t sampling =
        in_passes(D::kSamplerSamplingPasses, per_pass,
                  sampler_floor_steps(train_rows, D::kSamplerSamplingFloor), D::kSamplerPhaseCap);
    const std::int64_t samples = std::max<std::int64_t>(1, c.samples);
    c.thin = std::max(D::kSamplerThinFloor, (sampling + samples - 1) / samples);
  }
  if (given.burn_in && given.thin) return {};
  return fmt::format(
      "budget sized to {} training rows ({} steps per pass): burn-in {}, then {} samples "
      "thinned 1 in {} ({})",
      train_rows, per_pass, passes_text(c.burn_in, per_pass), c.samples, c.thin,
      passes_text(c.thin * c.samples, per_pass));
}

double sghmc_sized_learning_rate(std::int64_t train_rows) {
  return std::clamp(kSghmcLrPerSqrtRow * std::sqrt(static_cast<double>(train_rows)),
                    kSghmcLrFloor, kSghmcLrCap);
}

std::string size_max_move(TrainSettings& s, std::int64_t train_rows, const BudgetGiven& given) {
  if (s.sampler.method != Method::kRsghmc || given.max_move || train_rows < 1) return {};
  const double sghmc_move =
      std::sqrt(sghmc_sized_learning_rate(train_rows) / static_cast<double>(train_rows));
  s.sampler.relativistic.max_move = std::min(kMaxMoveCap, kMaxMoveOverSghmcMove * sghmc_move);
  return fmt::format("rsghmc's largest move per step sized to {} training rows: {:.3g} "
                     "(default: min({:g}, {:g} x sghmc's move per step sqrt(lr / rows), lr "
                     "being sghmc's sized --lr {:.3g}))",
                     train_rows, s.sampler.relativistic.max_move, kMaxMoveCap,
                     kMaxMoveOverSghmcMove, sghmc_sized_learning_rate(train_rows));
}

std::string size_learning_rate(TrainSettings& s, std::int64_t train_rows, const BudgetGiven& given) {
  const Method method = s.sampler.method;
  if ((method != Method::kSghmc && method != Method::kSgld) || given.learning_rate ||
      train_rows < 1) {
    return {};
  }
  const bool sgld = method == Method::kSgld;
  const double per_sqrt_row = sgld ? kSgldLrPerSqrtRow : kSghmcLrPerSqrtRow;
  const double floor = sgld ? kSgldLrFloor : kSghmcLrFloor;
  const double cap = sgld ? kSgldLrCap : kSghmcLrCap;
  s.sampler.learning_rate =
      sgld ? std::clamp(per_sqrt_row * std::sqrt(static_cast<double>(train_rows)), floor, cap)
           : sghmc_sized_learning_rate(train_rows);
  return fmt::format("{}'s learning rate sized to {} training rows: {:.3g} (default: {:g} x "
                     "sqrt(rows), between {:g} and {:g})",
                     method_name(method), train_rows, s.sampler.learning_rate, per_sqrt_row,
                     floor, cap);
}

BudgetGiven budget_given_of(const std::set<std::string>& given) {
  const auto has = [&](const char* flag) { return given.count(flag) > 0; };
  return BudgetGiven{.burn_in = has("--burn-in"),
                     .thin = has("--thin"),
                     .samples = has("--samples"),
                     .steps = has("--steps"),
                     .epochs = has("--epochs"),
                     .check_every = has("--check-every"),
                     .patience = has("--patience"),
                     .min_steps = has("--min-steps"),
                     .max_move = has("--max-move") || has("--speed"),
                     .learning_rate = has("--lr")};
}

}  // namespace credence
