// The chain driver: burn-in, thinning, schedule, hooks, checkpoints, stop flag and
// divergence, C chains in parallel (one OpenMP thread per chain, single-threaded inside).
#include <fmt/format.h>
#include <omp.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <limits>
#include <mutex>
#include <string>

#include "credence/samplers.h"
#include "samplers/early_stop.h"
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
  const RunControl& control;
  const ChainCheckpoint* resume;
  std::mutex& hook_mutex;
};

// Splits a checkpoint's arrays into the sampler's and the potential's ("model." removed).
void split_state(const NamedArrays& all, NamedArrays& sampler, NamedArrays& model) {
  auto split = [](const auto& from, auto& to_sampler, auto& to_model) {
    for (const auto& [name, values] : from) {
      if (std::string_view(name).starts_with(kModelStatePrefix)) {
        to_model.emplace(name.substr(kModelStatePrefix.size()), values);
      } else {
        to_sampler.emplace(name, values);
      }
    }
  };
  split(all.floats, sampler.floats, model.floats);
  split(all.doubles, sampler.doubles, model.doubles);
  split(all.words, sampler.words, model.words);
}

void add_model_state(const NamedArrays& model, NamedArrays& into) {
  auto merge = [](const auto& from, auto& to) {
    for (const auto& [name, values] : from) to[std::string(kModelStatePrefix) + name] = values;
  };
  merge(model.floats, into.floats);
  merge(model.doubles, into.doubles);
  merge(model.words, into.words);
}

// Counts gradient evaluations for the run file's cost figures (ESS per 1000 gradients):
// every call that returns a gradient, whatever the method does with it.
class CountingPotential final : public PotentialFn {
 public:
  CountingPotential(std::unique_ptr<PotentialFn> inner, std::int64_t start)
      : inner_(std::move(inner)), count_(start) {}
  std::int64_t count() const { return count_; }

  std::int64_t rows() const override { return inner_->rows(); }
  Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) override {
    ++count_;
    return inner_->minibatch(theta, grad, out);
  }
  Status full(ConstThetaRef theta, ThetaRef grad, double& potential) override {
    ++count_;
    return inner_->full(theta, grad, potential);
  }
  bool gradient_noise_variance(ThetaRef vhat) override {
    return inner_->gradient_noise_variance(vhat);
  }
  std::optional<double> noise_temperature() const override {
    return inner_->noise_temperature();
  }
  Status before_step(ConstThetaRef theta, std::int64_t step, bool& changed) override {
    return inner_->before_step(theta, step, changed);
  }
  bool prior_precision(ThetaRef precision) const override {
    return inner_->prior_precision(precision);
  }
  std::span<const double> hyperparameters() const override { return inner_->hyperparameters(); }
  void save_state(NamedArrays& out) const override { inner_->save_state(out); }
  Status restore_state(const NamedArrays& in) override { return inner_->restore_state(in); }

 private:
  std::unique_ptr<PotentialFn> inner_;
  std::int64_t count_;
};

// One chain: next batch and gradient, step, maybe keep a sample; checkpoints on the side.
class ChainRunner {
 public:
  ChainRunner(const ChainContext& cx, int chain) : cx_(cx), chain_(chain) {}

  ChainOutcome run() {
    if (Status started = start(); !started.ok()) return end_early(started);
    loop();
    return finish();
  }

 private:
  // Builds the potential and the sampler and places theta (fresh or resumed).
  Status start() {
    std::unique_ptr<PotentialFn> made_potential = cx_.factory(chain_);
    if (!made_potential) return Status::invalid_input("the potential factory returned null");
    potential_ = std::make_unique<CountingPotential>(
        std::move(made_potential), cx_.resume ? cx_.resume->gradient_evals : 0);
    seconds_before_ = cx_.resume ? cx_.resume->seconds : 0.0;
    // The noise temperature is the potential's when it fixes one: a likelihood-tempered
    // potential already holds the 1/T (docs/methods.md section 1, Form B).
    SamplerSettings settings = cx_.settings;
    if (const std::optional<double> noise = potential_->noise_temperature();
        noise && is_sampler(settings.method)) {
      settings.temperature = *noise;
    }
    Result<std::unique_ptr<Sampler>> made =
        Sampler::create(settings, cx_.parameters, potential_->rows(),
                        stream_seed(cx_.layout.seed, SeedPurpose::kSampler,
                                    static_cast<std::uint64_t>(chain_)));
    if (!made.ok()) return made.status();
    sampler_ = std::move(*made);
    if (cx_.layout.early_stop.every > 0) {
      stopper_ = std::make_unique<samplers::EarlyStopper>(
          cx_.layout.early_stop, cx_.parameters, cx_.layout.early_stop.scorer(chain_));
    }
    theta_.resize(cx_.parameters);
    if (cx_.resume) {
      const std::string which = "resuming chain " + std::to_string(chain_);
      if (cx_.resume->theta.size() != cx_.parameters) {
        return Status::corrupt(which + ": its state has " +
                               std::to_string(cx_.resume->theta.size()) +
                               " parameters; the network has " + std::to_string(cx_.parameters));
      }
      NamedArrays all_state = cx_.resume->state, early_state, sampler_state, model_state;
      samplers::take_early_stop_state(all_state, early_state);
      split_state(all_state, sampler_state, model_state);
      CREDENCE_RETURN_IF_ERROR(sampler_->restore_state(sampler_state).with_context(which));
      CREDENCE_RETURN_IF_ERROR(potential_->restore_state(model_state).with_context(which));
      if (stopper_) CREDENCE_RETURN_IF_ERROR(stopper_->restore(early_state).with_context(which));
      theta_ = cx_.resume->theta;
      step_ = cx_.resume->next_step;
      kept_ = cx_.resume->kept;
    } else {
      theta_.setZero();
      if (cx_.init) CREDENCE_RETURN_IF_ERROR(cx_.init(chain_, theta_));
    }
    return Status::ok_status();
  }

  void loop() {
    const ChainSettings& layout = cx_.layout;
    const std::int64_t total = layout.burn_in + layout.thin * layout.samples;
    const StepSchedule schedule(cx_.settings.schedule, sampler_->base_step_size(), total);
    const bool checkpoints = static_cast<bool>(cx_.hooks.on_checkpoint);
    StepReport report;
    for (; step_ < total; ++step_) {
      if (cx_.control.stop && cx_.control.stop->load(std::memory_order_relaxed)) {
        outcome_.end = ChainEnd::kStopped;
        outcome_.reason = "stop requested";
        outcome_.status = Status::interrupted("stop requested at step " + std::to_string(step_));
        return;
      }
      if (checkpoints && request_pending()) send(CheckpointCause::kRequested, step_);
      StepContext context;
      context.step = step_;
      context.step_size = schedule.step_size(step_);
      context.explore = schedule.exploring(step_);
      context.burn_in = step_ < layout.burn_in;
      context.total_steps = total;
      report = StepReport();
      // Between steps only: hmc and rhmc keep one target through a trajectory.
      bool target_changed = false;
      Status status = potential_->before_step(theta_, step_, target_changed);
      if (target_changed) sampler_->target_changed();
      if (status.ok()) status = sampler_->step(theta_, *potential_, context, report);
      if (status.ok() && !(report.potential <= layout.max_potential)) {
        status = Status::diverged(fmt::format("the potential {:.6g} exceeds the bound {:.6g}",
                                              report.potential, layout.max_potential));
      }
      if (!status.ok()) {
        outcome_.end =
            status.code() == StatusCode::kDiverged ? ChainEnd::kDiverged : ChainEnd::kFailed;
        outcome_.reason = status.message();
        outcome_.status = status;
        return;
      }
      if (report.acceptance && !context.burn_in) {
        acceptance_sum_ += *report.acceptance;
        ++acceptance_count_;
      }
      if (cx_.hooks.on_trace && step_ % layout.trace_every == 0) {
        std::lock_guard<std::mutex> lock(cx_.hook_mutex);
        cx_.hooks.on_trace(TraceRow{chain_, step_, report});
      }
      if (stopper_) {
        if (!check_early_stop(total)) return;
        continue;
      }
      // A cyclical schedule's exploration steps run at T = 0 and are never kept.
      const bool keep = step_ >= layout.burn_in &&
                        (step_ - layout.burn_in + 1) % layout.thin == 0 && !context.explore;
      if (!keep) continue;
      if (!theta_.allFinite()) {
        outcome_.end = ChainEnd::kDiverged;
        outcome_.reason = "theta is not finite at a kept sample";
        outcome_.status = Status::diverged(outcome_.reason);
        return;
      }
      // Finite weights can still be past what the run file's float summaries hold (a
      // layer's squared norm overflows to inf, and readers then refuse the whole file):
      // a chain whose weights ran that far has diverged; its earlier samples stay.
      if (!(theta_.template cast<double>().squaredNorm() <
            static_cast<double>(std::numeric_limits<float>::max()))) {
        outcome_.end = ChainEnd::kDiverged;
        outcome_.reason = "the weights' squared norm is past a float's range at a kept sample";
        outcome_.status = Status::diverged(outcome_.reason);
        return;
      }
      if (cx_.hooks.on_sample) {
        std::lock_guard<std::mutex> lock(cx_.hook_mutex);
        cx_.hooks.on_sample(
            KeptSample{chain_, step_, kept_, theta_, potential_->hyperparameters()});
      }
      ++kept_;
      if (checkpoints) send(CheckpointCause::kKeptSample, step_ + 1);
    }
  }

  // Early stopping replaces the keep rule: score theta when due; when the chain should
  // end, keep the best iterate and jump to the end of the budget, so the checkpoints
  // that follow say the chain is done. False when the chain ends here.
  bool check_early_stop(std::int64_t total) {
    Result<bool> end = stopper_->after_step(step_, total, theta_);
    if (!end.ok()) {
      outcome_.end =
          end.status().code() == StatusCode::kDiverged ? ChainEnd::kDiverged : ChainEnd::kFailed;
      outcome_.reason = end.status().message();
      outcome_.status = end.status();
      return false;
    }
    if (!*end) return true;
    if (cx_.hooks.on_sample) {
      std::lock_guard<std::mutex> lock(cx_.hook_mutex);
      cx_.hooks.on_sample(KeptSample{chain_, stopper_->best_step(), kept_, stopper_->best_theta(),
                                         potential_->hyperparameters()});
    }
    ++kept_;
    outcome_.reason = stopper_->reason();
    step_ = total;
    if (cx_.hooks.on_checkpoint) send(CheckpointCause::kKeptSample, step_);
    return false;
  }

  ChainOutcome finish() {
    outcome_.step = step_;
    outcome_.kept = kept_;
    outcome_.mean_acceptance =
        acceptance_count_ > 0 ? acceptance_sum_ / static_cast<double>(acceptance_count_) : 0.0;
    if (outcome_.end == ChainEnd::kDiverged) {
      outcome_.reason +=
          " at step " + std::to_string(step_) + "; try a smaller step size (or learning rate)";
      outcome_.status = Status::diverged(outcome_.reason);
    }
    // After a divergence the sampler state may hold the failed step's partial
    // update only for full-batch rules; theta is the last good position for every
    // stochastic-gradient rule because step() checks before it updates.
    fill(CheckpointCause::kEnded, step_);
    mark_end();
    call_checkpoint_hook();
    outcome_.checkpoint = std::move(checkpoint_);
    return std::move(outcome_);
  }

  // The chain could not start: report it, and hand back the state it was given so a
  // writer that stores the final checkpoint loses nothing.
  ChainOutcome end_early(const Status& status) {
    outcome_.end = ChainEnd::kFailed;
    outcome_.reason = status.message();
    outcome_.status = status;
    if (cx_.resume) {
      checkpoint_ = *cx_.resume;
      outcome_.step = cx_.resume->next_step;
      outcome_.kept = cx_.resume->kept;
    }
    checkpoint_.chain = chain_;
    checkpoint_.cause = CheckpointCause::kEnded;
    mark_end();
    call_checkpoint_hook();
    outcome_.checkpoint = std::move(checkpoint_);
    return std::move(outcome_);
  }

  bool request_pending() const {
    return cx_.control.checkpoint_request &&
           cx_.control.checkpoint_request->load(std::memory_order_relaxed) != served_request_;
  }

  // Fills checkpoint_ with the state before step `next_step`. theta_ keeps its size, so
  // the copy reuses checkpoint_'s buffer; the state maps are rebuilt (a checkpoint may
  // allocate, the step loop between checkpoints does not).
  void fill(CheckpointCause cause, std::int64_t next_step) {
    // Read before saving: a request that arrives meanwhile is served next time.
    if (cx_.control.checkpoint_request) {
      served_request_ = cx_.control.checkpoint_request->load(std::memory_order_relaxed);
    }
    checkpoint_.chain = chain_;
    checkpoint_.next_step = next_step;
    checkpoint_.kept = kept_;
    checkpoint_.seconds =
        seconds_before_ +
        std::chrono::duration<double>(std::chrono::steady_clock::now() - started_).count();
    checkpoint_.gradient_evals = potential_->count();
    checkpoint_.theta = theta_;
    checkpoint_.state = sampler_->save_state();
    if (stopper_) stopper_->save(checkpoint_.state);
    model_state_ = NamedArrays();
    potential_->save_state(model_state_);
    add_model_state(model_state_, checkpoint_.state);
    checkpoint_.cause = cause;
  }

  void mark_end() {
    checkpoint_.end = outcome_.end;
    checkpoint_.status = outcome_.status;
    checkpoint_.reason = outcome_.reason;
  }

  void call_checkpoint_hook() {
    if (!cx_.hooks.on_checkpoint) return;
    std::lock_guard<std::mutex> lock(cx_.hook_mutex);
    cx_.hooks.on_checkpoint(checkpoint_);
  }

  void send(CheckpointCause cause, std::int64_t next_step) {
    fill(cause, next_step);
    call_checkpoint_hook();
  }

  const ChainContext& cx_;
  const int chain_;
  std::unique_ptr<CountingPotential> potential_;
  std::unique_ptr<Sampler> sampler_;
  std::unique_ptr<samplers::EarlyStopper> stopper_;  // optimizers with early stopping only
  const std::chrono::steady_clock::time_point started_ = std::chrono::steady_clock::now();
  double seconds_before_ = 0;  // run time of earlier sessions of a resumed chain
  Eigen::VectorXf theta_;  // (P)
  std::int64_t step_ = 0;  // the next step to run
  std::int64_t kept_ = 0;
  double acceptance_sum_ = 0;
  std::int64_t acceptance_count_ = 0;
  std::uint64_t served_request_ = 0;  // the last checkpoint generation served
  ChainCheckpoint checkpoint_;        // reused between checkpoints
  NamedArrays model_state_;
  ChainOutcome outcome_;
};

// The global index of the chain at position `position` of this call.
int chain_id(const ChainSettings& chains, int position) {
  return chains.chain_ids.empty() ? position
                                  : chains.chain_ids[static_cast<std::size_t>(position)];
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
                              const RunControl& control,
                              const std::vector<ChainCheckpoint>& resume) {
  CREDENCE_RETURN_IF_ERROR(validate(settings, parameters));
  if (chains.chains < 1 || chains.burn_in < 0 || chains.thin < 1 || chains.samples < 0 ||
      chains.trace_every < 1 || chains.threads < 0) {
    return Status::invalid_input(
        "chain settings need chains >= 1, burn_in >= 0, thin >= 1, samples >= 0, "
        "trace_every >= 1 and threads >= 0");
  }
  if (!chains.chain_ids.empty()) {
    std::vector<int> ids = chains.chain_ids;
    std::sort(ids.begin(), ids.end());
    if (ids.size() != static_cast<std::size_t>(chains.chains) || ids.front() < 0 ||
        std::adjacent_find(ids.begin(), ids.end()) != ids.end()) {
      return Status::invalid_input(
          "chain settings: chain_ids must list `chains` distinct indices >= 0");
    }
  }
  if (!factory) return Status::invalid_input("run_chains needs a potential factory");
  const EarlyStopSettings& early = chains.early_stop;
  if (early.every < 0 || (early.every > 0 && (!early.scorer || early.patience < 1 ||
                                              chains.thin != 1 || chains.samples != 1 ||
                                              !(early.min_improvement >= 0)))) {
    return Status::invalid_input(
        "early stopping needs a scorer, patience >= 1, min_improvement >= 0 and the "
        "optimizer layout of one kept sample (thin 1, samples 1)");
  }
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
    // A chain that never reached its first checkpoint starts afresh, exactly as it
    // would have the first time (its seed depends on the chain index only).
    if (from != nullptr && from->next_step == 0 && from->theta.size() == 0) from = nullptr;
    ChainContext cx{settings, chains, parameters, factory, init, hooks, control, from, hook_mutex};
    run.chains[static_cast<std::size_t>(c)] = ChainRunner(cx, chain_id(chains, c)).run();
  }
  for (std::size_t i = 0; i < run.chains.size(); ++i) {
    const ChainOutcome& outcome = run.chains[i];
    const int c = chain_id(chains, static_cast<int>(i));
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
