// compare's second chance for a sampler whose end-of-run verdict says it is not done:
// one re-run from the start with a longer budget, sized from the verdict's own estimate
// and bounded in steps and in wall time, so that a table where longer chains help gets
// them and every other table pays at most the stated limits.
//
// Why a re-run and not a continuation: the first run's burn-in and thinning were sized
// for its length; a longer run burns in for half its steps (the drift check compares the
// halves of what follows) and thins the rest to the same number of kept samples.
// Measured on the demo table (data/demo.csv, 4 chains, 400 kept samples per chain): at
// 4,000 steps per chain the worst probe-probability R-hat was 2.9 (sgld), 1.7 (sghmc) and
// 1.4 (rsghmc); at 100,000 steps 1.41, 1.06 and 1.04, the median probe row's 1.11, 1.014
// and 1.007; rsghmc at 300,000 steps 1.011 (median 1.003, probe log-likelihood 1.013).
#pragma once

#include <cstdint>
#include <optional>
#include <string>

#include "credence/run_verdict.h"

namespace credence {

/// Longest re-run, in steps per chain: room for the demo's estimate (about 630,000 once
/// sgld's and sghmc's rates were sized to the table, credence/budget.h). At 400,000 and 60 s
/// the demo's worst probe-row R-hat was 1.010-1.014 for sgld, sghmc and rsghmc; granting
/// the whole estimate (about 45 s per sampler at ~55,000 steps/s on two cores) brought
/// sgld and sghmc to 1.01 or below and left rsghmc at 1.014, the demo's compare taking 1 min
/// 53 s. A step's cost depends on the network and the batch, not on the table's rows, and
/// --extend-seconds bounds it on slower machines.
inline constexpr std::int64_t kExtendMaxSteps = 800000;
/// compare's default bound on one re-run's estimated wall time (--extend-seconds).
inline constexpr double kExtendSeconds = 120;
/// A re-run asks for the first run's steps plus this many times the verdict's estimate of
/// the steps still wanted. Half of a re-run burns in, so 2 would sample exactly the
/// estimate; 4 samples twice it, because an estimate from chains shorter than their
/// autocorrelation overstates their ESS. On the demo the re-runs given exactly the estimate
/// (530,000-640,000 steps per chain) ended with the worst probe-row R-hat at 1.012-1.014
/// for rsghmc, and their own verdicts asked 40-60 times more; given 800,000 (the step
/// limit, which 4 x the estimate reaches), rsghmc's was 1.006 (worst probe bulk-ESS 1,098).
inline constexpr std::int64_t kExtendEstimateFactor = 4;
/// Without an estimate from the verdict, a re-run is this many times the first run.
inline constexpr std::int64_t kExtendFactorWithoutEstimate = 8;

struct ExtendPlan {
  std::int64_t steps = 0;  // per chain; 0: no re-run
  std::string why;         // what was decided and why, for the log and the summary
};

/// What to do after a sampler's first run of `steps_run` steps per chain that took
/// `seconds_run` wall seconds: nothing when the verdict is done or only failed checks
/// that more steps cannot fix (constant, pinned); otherwise a re-run of
/// min(wanted, kExtendMaxSteps, steps the time bound allows) steps, where wanted is
/// steps_run + kExtendEstimateFactor x the verdict's more_steps_per_chain, or
/// kExtendFactorWithoutEstimate x steps_run without an estimate. No re-run when that is
/// under twice the first run (`why` then says so). `max_seconds` <= 0: never.
ExtendPlan plan_extension(const RunVerdict& verdict, std::int64_t steps_run, double seconds_run,
                          double max_seconds);

/// Burn-in and thinning of a re-run of `steps` per chain keeping `samples`: half burns in
/// (more when the thinning rounds down), the rest is thinned to `samples`.
struct ExtendShare {
  std::int64_t burn_in = 0;
  std::int64_t thin = 1;
};
ExtendShare extend_share(std::int64_t steps, std::int64_t samples);

}  // namespace credence
