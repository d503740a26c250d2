// run_compare: train each entry on one split and budget, then assess each on the test rows.
#include "credence/compare.h"

#include <fmt/format.h>

#include <chrono>
#include <cmath>
#include <filesystem>

#include "compare/compare_extend.h"
#include "compare/compare_samples.h"
#include "util/log.h"

namespace credence {
namespace {

TrainRequest request_for(const CompareRequest& c, const CompareEntry& entry,
                         const CompareBudget& budget) {
  TrainRequest r;
  r.data_path = c.data_path;
  r.data = c.data;
  r.net_path = c.net_path;
  r.hidden = c.hidden;
  r.activation = c.activation;
  r.linear_path = c.linear_path;
  r.out_path = (std::filesystem::path(c.out_dir) / (entry.file_stem + ".h5")).string();
  r.force = true;
  r.hooks = c.hooks;
  r.command_line = c.command_line;
  TrainSettings& s = r.settings;
  s.sampler.method = entry.method;
  s.sampler.learning_rate = default_learning_rate(entry.method);
  if (entry.learning_rate) s.sampler.learning_rate = *entry.learning_rate;
  s.chains.chains = c.chains;
  s.chains.seed = c.chain_seed.value_or(c.data.split.seed);
  s.summary_seed = c.data.split.seed;
  s.batches.batch_rows = c.batch_rows;
  if (is_sampler(entry.method)) {
    const SamplerShare share = sampler_share(budget);
    s.chains.samples = share.samples;
    s.chains.thin = share.thin;
    s.chains.burn_in = share.burn_in;
  } else {
    s.steps = budget.steps;
  }
  // The budget is compare's; train adds only the optimizers' early stopping.
  r.budget_given = BudgetGiven{.burn_in = true, .thin = true, .samples = true, .steps = true,
                               .epochs = true, .learning_rate = entry.learning_rate.has_value()};
  return r;
}

}  // namespace

SamplerShare sampler_share(std::int64_t steps, std::int64_t samples) {
  SamplerShare share;
  const std::int64_t after_burn_in = std::max<std::int64_t>(1, steps / 2);
  share.samples = std::max<std::int64_t>(1, std::min(samples, after_burn_in));
  share.thin = std::max<std::int64_t>(1, after_burn_in / share.samples);
  share.burn_in = std::max<std::int64_t>(0, steps - share.thin * share.samples);
  if (share.samples < samples) {
    share.note = fmt::format(
        "--samples {} cut to {}: a budget of {} steps leaves {} after burn-in, one sample per "
        "step at most; give more --epochs (or fewer --samples)",
        samples, share.samples, steps, after_burn_in);
  }
  return share;
}

SamplerShare sampler_share(const CompareBudget& budget) {
  if (!budget.sized_burn_in || !budget.sized_thin) return sampler_share(budget.steps, budget.samples);
  return {*budget.sized_burn_in, *budget.sized_thin, budget.samples, {}};
}

Result<CompareBudget> compare_budget(const CompareRequest& request) {
  if (request.epochs < 0 || !std::isfinite(request.epochs)) {
    return Status::invalid_input(
        fmt::format("--epochs {}: give a positive number of passes", request.epochs));
  }
  Result<Dataset> data = load_dataset(request.data_path, request.data);
  if (!data.ok()) return data.status();
  CompareBudget budget;
  budget.train_rows = static_cast<std::int64_t>(data->split.train.size());
  if (request.samples_given) {
    budget.samples = request.samples;
  } else {
    // A net file's size is known only once it is parsed; its samples are not cut.
    const std::int64_t parameters =
        request.net_path.empty()
            ? dense_parameters(data->preprocessing.input_width, request.hidden,
                               static_cast<int>(data->preprocessing.class_names.size()),
                               request.linear_path)
            : 0;
    const CompareSamples sized = default_compare_samples(parameters, request.chains);
    budget.samples = sized.samples;
    budget.samples_note = sized.note;
  }
  const std::int64_t per_pass = steps_per_pass(budget.train_rows, request.batch_rows);
  if (request.epochs > 0) {
    budget.steps = static_cast<std::int64_t>(std::ceil(request.epochs * static_cast<double>(per_pass)));
    budget.steps = std::max<std::int64_t>(budget.steps, 2);
    return budget;
  }
  // A sampler's default budget in `credence train`, so every method gets what a sampler
  // needs: burn-in plus a sampling phase, each in passes with floors and caps.
  TrainSettings sampler;
  sampler.batches.batch_rows = request.batch_rows;
  sampler.chains.samples = budget.samples;
  (void)size_budget(sampler, budget.train_rows, BudgetGiven{.samples = true});
  budget.steps = sampler.chains.burn_in + sampler.chains.thin * sampler.chains.samples;
  budget.sized_burn_in = sampler.chains.burn_in;
  budget.sized_thin = sampler.chains.thin;
  return budget;
}

std::string budget_line(const CompareRequest& request, const CompareBudget& budget) {
  const std::int64_t per_pass = steps_per_pass(budget.train_rows, request.batch_rows);
  const double passes = static_cast<double>(budget.steps) / static_cast<double>(per_pass);
  const std::string passes_text =
      passes >= 100 ? fmt::format("{:.0f}", passes) : fmt::format("{:.3g}", passes);
  return fmt::format(
      "every method: {} steps per chain x {} chains ({} passes over {} training rows, batch "
      "{}{})",
      budget.steps, request.chains, passes_text, budget.train_rows, request.batch_rows,
      request.epochs > 0 ? "" : "; sized to the table, --epochs sets it");
}

Result<std::vector<CompareOutcome>> run_compare(const CompareRequest& request,
                                                CompareBudget* budget_out) {
  if (request.entries.empty()) return Status::invalid_input("give at least one method");
  if (request.chains < 1) return Status::invalid_input("--chains needs at least 1");
  Result<CompareBudget> budget = compare_budget(request);
  if (!budget.ok()) return budget.status();
  if (budget_out != nullptr) *budget_out = *budget;
  std::error_code error;
  std::filesystem::create_directories(request.out_dir, error);
  if (error) {
    return Status::io_error(fmt::format("cannot create the output folder {}: {}",
                                        request.out_dir, error.message()));
  }
  if (request.on_budget) request.on_budget(budget_line(request, *budget));
  // Said once, before any training, and again in the summary of each sampler it touches.
  const std::string cut = sampler_share(*budget).note;
  bool any_sampler = false, any_minibatch_sampler = false;
  // The cut is in minibatch steps: the tuning map gives rhmc cells a budget of their own.
  const auto minibatch_sampler = [](Method m) { return is_sampler(m) && !is_full_batch(m); };
  for (const CompareEntry& entry : request.entries) {
    any_sampler = any_sampler || is_sampler(entry.method);
    any_minibatch_sampler = any_minibatch_sampler || minibatch_sampler(entry.method);
  }
  if (any_minibatch_sampler && !cut.empty()) log().warn("{}", cut);
  if (any_sampler && !budget->samples_note.empty()) log().warn("{}", budget->samples_note);
  AssessJobOptions assess;
  assess.split = AssessSplit::kTest;
  assess.truth_path = request.truth_path;
  assess.metrics.bootstrap.resamples = request.bootstrap;

  std::vector<CompareOutcome> outcomes;
  for (const CompareEntry& entry : request.entries) {
    CompareOutcome outcome;
    outcome.entry = entry;
    TrainRequest train = request_for(request, entry, *budget);
    if (request.adjust_request) {
      request.adjust_request(static_cast<std::size_t>(&entry - request.entries.data()), train);
    }
    outcome.run_path = train.out_path;
    if (is_sampler(entry.method)) {
      if (minibatch_sampler(entry.method)) outcome.budget_note = sampler_share(*budget).note;
      if (!budget->samples_note.empty()) {
        outcome.budget_note += (outcome.budget_note.empty() ? "" : "; ") + budget->samples_note;
      }
    }
    std::optional<RunVerdict> verdict;
    train.verdict = &verdict;
    const auto started = std::chrono::steady_clock::now();
    Status trained = run_train(train);
    if (trained.ok() && verdict && minibatch_sampler(entry.method) && request.epochs == 0) {
      const double seconds =
          std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
      const ExtendPlan plan = plan_extension(*verdict, budget->steps, seconds, request.extend_seconds);
      if (!plan.why.empty()) {
        log().info("{}: {}", entry.label, plan.why);
        outcome.budget_note += (outcome.budget_note.empty() ? "" : "; ") + plan.why;
      }
      if (plan.steps > 0) {
        const ExtendShare share = extend_share(plan.steps, train.settings.chains.samples);
        train.settings.chains.burn_in = share.burn_in;
        train.settings.chains.thin = share.thin;
        verdict.reset();
        trained = run_train(train);
      }
    }
    if (trained.code() == StatusCode::kInterrupted || trained.code() == StatusCode::kInvalidInput) {
      return trained;  // Ctrl-C stops the whole comparison; bad input is the user's to fix
    }
    if (!trained.ok()) {
      outcome.diverged = trained.code() == StatusCode::kDiverged;
      outcome.failure = trained.message();
      log().warn("{}: {}", entry.label, trained.message());
      outcomes.push_back(std::move(outcome));
      continue;
    }
    Result<MethodRun> run = load_method_run(train.out_path, request.data_path, entry.label, assess);
    if (!run.ok()) return run.status();
    for (ChainStatus status : run->summary.chain_status) {
      outcome.diverged = outcome.diverged || status == ChainStatus::kDiverged;
    }
    run->budget_note = outcome.budget_note;
    if (request.stein_draws_per_chain > 0) {
      SteinSettings stein;
      stein.max_draws_per_chain = request.stein_draws_per_chain;
      stein.data_path = request.data_path;
      Result<RunStein> ksd = run_stein_discrepancy(train.out_path, stein);
      if (!ksd.ok()) return ksd.status();
      run->stein = std::move(*ksd);
    }
    outcome.run = std::move(*run);
    outcome.run->verdict = std::move(verdict);
    outcomes.push_back(std::move(outcome));
  }
  return outcomes;
}

std::vector<MethodRun> trained_runs(const std::vector<CompareOutcome>& outcomes) {
  std::vector<MethodRun> runs;
  for (const CompareOutcome& o : outcomes) {
    if (o.run) runs.push_back(*o.run);
  }
  return runs;
}

}  // namespace credence
