// rhmc's cells in the tuning map (sweep.h): how the map's budget in passes becomes
// trajectories of full-data leapfrog steps, the flags an rhmc map refuses, and the
// divergent trajectories its chains counted. run_tuning_map_job is the only caller.
#pragma once

#include <cstdint>
#include <string>

#include "credence/compare.h"
#include "credence/status.h"
#include "credence/sweep.h"
#include "credence/tuning_map.h"

namespace credence {

/// rhmc's share of the map's budget, in iterations of one trajectory of L leapfrog steps
/// (L full-data gradients, L passes over the training rows). With --epochs E every cell
/// gets E passes per chain, so an rhmc cell runs floor(E / L) trajectories: half (at
/// least) burn in and the rest are thinned to the kept samples, as compare splits a
/// sampler's steps (sampler_share). Without --epochs, rhmc's own default in train
/// (budget.h: kFullBatchBurnIn iterations, then kFullBatchSampling thinned to the samples).
struct RhmcBudget {
  std::int64_t burn_in = 0;
  std::int64_t thin = 1;
  std::int64_t samples = 0;
  std::string note;  // why fewer samples are kept than asked, or empty
  std::int64_t iterations() const { return burn_in + thin * samples; }
};

/// The share of `compare`'s budget (`budget` as run_compare sized it) one rhmc cell gets.
RhmcBudget rhmc_budget(const CompareRequest& compare, const CompareBudget& budget);

/// The line that says it ("rhmc: 100 trajectories of 20 leapfrog steps per chain ..."),
/// without its newline.
std::string rhmc_budget_line(const CompareRequest& compare, const RhmcBudget& budget);

/// rhmc's divergent trajectories (energy error past 1000 T, or non-finite) summed over the
/// chains' last committed states in `run_path` (the sampler's state word "divergent",
/// src/samplers/hamiltonian.cc); NaN when a state lacks it. Errors: the run file's.
Result<double> divergent_trajectories(const std::string& run_path);

/// Refuses (kInvalidInput, one message) before anything is trained or written, as
/// method_flags does in train: --batch when rhmc is the only method (its gradients read
/// every row), --extend-seconds with rhmc (each cell keeps the budget it is given), and
/// --epochs under two trajectories. OK when `grid` has no rhmc.
Status check_rhmc_flags(const TuningMapRequest& request, const TuningGrid& grid);

}  // namespace credence
