// The chain driver: burn-in, thinning, schedule, hooks, stop flag and divergence,
// C chains in parallel (one OpenMP thread per chain, single-threaded inside).
#include <fmt/format.h>
#include <omp.h>

#include <atomic>
#include <cmath>
#include <mutex>
#include <string>

#include "credence/samplers.h"
#include "util/log.h"
#include "util/rng.h"

namespace credence {
namespace {

struct ChainContext {
  const SamplerSettings& settings;
  const ChainSettings& layout;
  std::int64_t parameters;
  const PotentialFactory& factory;
  const InitFn& init;
  const ChainHooks& hooks;
  const std::atomic<bool>* stop;
  const ChainCheckpoint* resume;
  std::mutex& hook_mutex;
};

ChainOutcome fail(ChainOutcome outcome, std::int64_t step, const Status& status) {
  outcome.end = ChainEnd::kFailed;
  outcome.step = step;
  outcome.reason = status.message();
  outcome.status = status;
  return outcome;
}

// One chain: next batch and gradient, step, maybe keep a sample.
ChainOutcome run_one_chain(const ChainContext& cx, int chain) {
  ChainOutcome outcome;
  std::unique_ptr<PotentialFn> potential = cx.factory(chain);
  if (!potential) {
    return fail(std::move(outcome), 0,
                Status::invalid_input("the potential factory returned null"));
  }
  Result<std::unique_ptr<Sampler>> made =
      Sampler::create(cx.settings, cx.parameters, potential->rows(),
                      mix_seed(cx.layout.seed, static_cast<std::uint64_t>(chain)));
  if (!made.ok()) return fail(std::move(outcome), 0, made.status());
  Sampler& sampler = **made;

  Eigen::VectorXf theta(cx.parameters);  // (P)
  std::int64_t step = 0, kept = 0;
  if (cx.resume) {
    if (cx.resume->theta.size() != cx.parameters) {
      return fail(std::move(outcome), 0,
                  Status::corrupt("resume state of chain " + std::to_string(chain) +
                                  " has the wrong number of parameters"));
    }
    Status restored = sampler.restore_state(cx.resume->sampler);
    if (!restored.ok()) return fail(std::move(outcome), 0, restored);
    theta = cx.resume->theta;
    step = cx.resume->next_step;
    kept = cx.resume->kept;
  } else {
    theta.setZero();
    if (cx.init) {
      Status initialised = cx.init(chain, theta);
      if (!initialised.ok()) return fail(std::move(outcome), 0, initialised);
    }
  }

  const ChainSettings& layout = cx.layout;
  const std::int64_t total = layout.burn_in + layout.thin * layout.samples;
  const StepSchedule schedule(cx.settings.schedule, sampler.base_step_size(), total);
  double acceptance_sum = 0;
  std::int64_t acceptance_count = 0;
  StepReport report;
  for (; step < total; ++step) {
    if (cx.stop && cx.stop->load(std::memory_order_relaxed)) {
      outcome.end = ChainEnd::kStopped;
      outcome.reason = "stop requested";
      outcome.status = Status::interrupted("stop requested at step " + std::to_string(step));
      break;
    }
    StepContext context;
    context.step = step;
    context.step_size = schedule.step_size(step);
    context.explore = schedule.exploring(step);
    context.burn_in = step < layout.burn_in;
    report = StepReport();
    Status status = sampler.step(theta, *potential, context, report);
    if (status.ok() && !(report.potential <= layout.max_potential)) {
      status = Status::diverged(fmt::format("the potential {:.6g} exceeds the bound {:.6g}",
                                            report.potential, layout.max_potential));
    }
    if (!status.ok()) {
      outcome.end =
          status.code() == StatusCode::kDiverged ? ChainEnd::kDiverged : ChainEnd::kFailed;
      outcome.reason = status.message();
      outcome.status = status;
      break;
    }
    if (report.acceptance && !context.burn_in) {
      acceptance_sum += *report.acceptance;
      ++acceptance_count;
    }
    if (cx.hooks.on_trace && step % layout.trace_every == 0) {
      std::lock_guard<std::mutex> lock(cx.hook_mutex);
      cx.hooks.on_trace(TraceRow{chain, step, report});
    }
    // A cyclical schedule's exploration steps run at T = 0 and are never kept.
    const bool keep = step >= layout.burn_in && (step - layout.burn_in + 1) % layout.thin == 0 &&
                      !context.explore;
    if (keep) {
      if (!theta.allFinite()) {
        outcome.end = ChainEnd::kDiverged;
        outcome.reason = "theta is not finite at a kept sample";
        outcome.status = Status::diverged(outcome.reason);
        break;
      }
      if (cx.hooks.on_sample) {
        std::lock_guard<std::mutex> lock(cx.hook_mutex);
        cx.hooks.on_sample(KeptSample{chain, step, kept, theta});
      }
      ++kept;
    }
  }
  outcome.step = step;
  outcome.kept = kept;
  outcome.mean_acceptance =
      acceptance_count > 0 ? acceptance_sum / static_cast<double>(acceptance_count) : 0.0;
  if (outcome.end == ChainEnd::kDiverged) {
    outcome.reason +=
        " at step " + std::to_string(step) + "; try a smaller step size (or learning rate)";
    outcome.status = Status::diverged(outcome.reason);
  }
  // After a divergence the sampler state may hold the failed step's partial
  // update only for full-batch rules; the checkpoint is the last good position
  // for every stochastic-gradient rule because step() checks before it updates.
  outcome.checkpoint.next_step = step;
  outcome.checkpoint.kept = kept;
  outcome.checkpoint.theta = theta;
  outcome.checkpoint.sampler = sampler.save_state();
  return outcome;
}

}  // namespace

std::string_view chain_end_name(ChainEnd end) {
  switch (end) {
    case ChainEnd::kCompleted:
      return "completed";
    case ChainEnd::kDiverged:
      return "diverged";
    case ChainEnd::kStopped:
      return "stopped";
    case ChainEnd::kFailed:
      return "failed";
  }
  return "unknown";
}

Result<RunOutcome> run_chains(const SamplerSettings& settings, const ChainSettings& chains,
                              std::int64_t parameters, const PotentialFactory& factory,
                              const InitFn& init, const ChainHooks& hooks,
                              const std::atomic<bool>* stop,
                              const std::vector<ChainCheckpoint>& resume) {
  CREDENCE_RETURN_IF_ERROR(validate(settings, parameters));
  if (chains.chains < 1 || chains.burn_in < 0 || chains.thin < 1 || chains.samples < 0 ||
      chains.trace_every < 1 || chains.threads < 0) {
    return Status::invalid_input(
        "chain settings need chains >= 1, burn_in >= 0, thin >= 1, samples >= 0, "
        "trace_every >= 1 and threads >= 0");
  }
  if (!factory) return Status::invalid_input("run_chains needs a potential factory");
  if (!resume.empty() && resume.size() != static_cast<std::size_t>(chains.chains)) {
    return Status::invalid_input("resuming needs one checkpoint per chain: got " +
                                 std::to_string(resume.size()) + " for " +
                                 std::to_string(chains.chains) + " chains");
  }
  RunOutcome run;
  run.chains.resize(static_cast<std::size_t>(chains.chains));
  std::mutex hook_mutex;
  const int threads = chains.threads > 0 ? chains.threads : omp_get_max_threads();
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads)
  for (int c = 0; c < chains.chains; ++c) {
    const ChainCheckpoint* from = resume.empty() ? nullptr : &resume[static_cast<std::size_t>(c)];
    ChainContext cx{settings, chains, parameters, factory, init, hooks, stop, from, hook_mutex};
    run.chains[static_cast<std::size_t>(c)] = run_one_chain(cx, c);
  }
  for (std::size_t c = 0; c < run.chains.size(); ++c) {
    const ChainOutcome& outcome = run.chains[c];
    if (outcome.end == ChainEnd::kCompleted) continue;
    if (outcome.end == ChainEnd::kStopped) {
      log().info("chain {} stopped at step {}", c, outcome.step);
    } else {
      log().warn("chain {} {}: {}", c, chain_end_name(outcome.end), outcome.reason);
    }
    if (run.status.ok()) run.status = outcome.status.with_context("chain " + std::to_string(c));
  }
  return run;
}

}  // namespace credence
