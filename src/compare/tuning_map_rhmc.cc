// rhmc's cells in the tuning map: budget in trajectories, refused flags, divergent
// trajectories (tuning_map_rhmc.h).
#include "compare/tuning_map_rhmc.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <memory>

#include "credence/budget.h"
#include "credence/ensemble.h"

namespace credence {

RhmcBudget rhmc_budget(const CompareRequest& compare, const CompareBudget& budget) {
  const int leapfrog = HmcSettings{}.leapfrog_steps;
  RhmcBudget out;
  if (compare.epochs > 0) {
    // Capped so that an absurd --epochs cannot overflow the cast (it would never finish).
    const auto iterations =
        static_cast<std::int64_t>(std::min(std::floor(compare.epochs / leapfrog), 1e15));
    const SamplerShare share = sampler_share(iterations, budget.samples);
    out.burn_in = share.burn_in;
    out.thin = share.thin;
    out.samples = share.samples;
    if (share.samples < budget.samples) {
      out.note = fmt::format(
          "rhmc keeps {} samples per chain, not {}: --epochs {:g} gives {} trajectories of {} "
          "leapfrog steps, half of them burn-in; give more --epochs (or fewer --samples)",
          share.samples, budget.samples, compare.epochs, iterations, leapfrog);
    }
    return out;
  }
  TrainSettings s;
  s.sampler.method = Method::kRhmc;
  s.chains.samples = budget.samples;
  (void)size_budget(s, budget.train_rows, BudgetGiven{.samples = true});
  out.burn_in = s.chains.burn_in;
  out.thin = s.chains.thin;
  out.samples = s.chains.samples;
  return out;
}

std::string rhmc_budget_line(const CompareRequest& compare, const RhmcBudget& b) {
  const int leapfrog = HmcSettings{}.leapfrog_steps;
  return fmt::format(
      "rhmc: {} trajectories of {} leapfrog steps per chain x {} chains = {} full-data "
      "gradients (passes over the training rows) per chain, burn-in {}, then {} samples "
      "thinned 1 in {} ({}; plus one gradient per trajectory after each draw of the prior "
      "scale)",
      b.iterations(), leapfrog, compare.chains, b.iterations() * leapfrog, b.burn_in, b.samples,
      b.thin,
      compare.epochs > 0 ? fmt::format("--epochs {:g} passes", compare.epochs)
                         : std::string("rhmc's default budget in train; --epochs sets it"));
}

Result<double> divergent_trajectories(const std::string& run_path) {
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(run_path);
  if (!reader.ok()) return reader.status();
  Result<std::vector<ChainState>> states = (*reader)->chain_states();
  if (!states.ok()) return states.status();
  double sum = 0;
  for (const ChainState& c : *states) {
    const auto found = c.state.words.find("divergent");
    if (found == c.state.words.end() || found->second.size() != 1) return std::nan("");
    sum += static_cast<double>(found->second[0]);
  }
  return sum;
}

Status check_rhmc_flags(const TuningMapRequest& request, const TuningGrid& grid) {
  const bool rhmc = std::find(grid.methods.begin(), grid.methods.end(), Method::kRhmc) !=
                    grid.methods.end();
  if (!rhmc) return Status::ok_status();
  const bool only_rhmc = std::all_of(grid.methods.begin(), grid.methods.end(),
                                     [](Method m) { return m == Method::kRhmc; });
  if (only_rhmc && request.batch_given) {
    return Status::invalid_input(
        "--batch is not read by rhmc: every one of its gradients reads all training rows; "
        "drop --batch (or map rsghmc beside it)");
  }
  if (request.compare.extend_seconds > 0) {
    return Status::invalid_input(
        "--extend-seconds is not read by a map with rhmc: each cell keeps the budget it is "
        "given, so that cells compare; drop --extend-seconds");
  }
  const int leapfrog = HmcSettings{}.leapfrog_steps;
  if (request.compare.epochs > 0 && request.compare.epochs < 2.0 * leapfrog) {
    return Status::invalid_input(fmt::format(
        "--epochs {:g} is under two rhmc trajectories of {} leapfrog steps (one full-data "
        "gradient each): give --epochs {} or more",
        request.compare.epochs, leapfrog, 2 * leapfrog));
  }
  return Status::ok_status();
}

}  // namespace credence
