// run_compare: train each entry on one split and budget, then assess each on the test rows.
#include "cli/compare_job.h"

#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <filesystem>

#include "util/log.h"

namespace credence::cli {
namespace {

TrainRequest request_for(const CompareRequest& c, const CompareEntry& entry,
                         const Budget& budget) {
  TrainRequest r;
  r.data_path = c.data_path;
  r.data = c.data;
  r.net_path = c.net_path;
  r.hidden = c.hidden;
  r.activation = c.activation;
  r.out_path = (std::filesystem::path(c.out_dir) / (entry.file_stem + ".h5")).string();
  r.force = true;
  r.quiet = c.quiet;
  r.command_line = c.command_line;
  TrainSettings& s = r.settings;
  s.sampler.method = entry.method;
  if (entry.learning_rate) s.sampler.learning_rate = *entry.learning_rate;
  s.chains.chains = c.chains;
  s.chains.seed = c.data.split.seed;
  s.summary_seed = c.data.split.seed;
  s.batches.batch_rows = c.batch_rows;
  if (is_sampler(entry.method)) {
    // Half the budget (at least) burns in; the rest is thinned to `samples` per chain.
    const std::int64_t samples = std::max<std::int64_t>(1, std::min(c.samples, budget.steps / 2));
    s.chains.samples = samples;
    s.chains.thin = std::max<std::int64_t>(1, (budget.steps / 2) / samples);
    s.chains.burn_in = budget.steps - s.chains.thin * samples;
  } else {
    s.steps = budget.steps;
  }
  return r;
}

}  // namespace

Result<Budget> compare_budget(const CompareRequest& request) {
  if (!(request.epochs > 0) || !std::isfinite(request.epochs)) {
    return Status::invalid_input(
        fmt::format("--epochs {}: give a positive number of passes", request.epochs));
  }
  Result<Dataset> data = load_dataset(request.data_path, request.data);
  if (!data.ok()) return data.status();
  Budget budget;
  budget.train_rows = static_cast<std::int64_t>(data->split.train.size());
  const std::int64_t batch = std::min(request.batch_rows, budget.train_rows);
  budget.steps = static_cast<std::int64_t>(
      std::ceil(request.epochs * static_cast<double>(budget.train_rows) /
                static_cast<double>(std::max<std::int64_t>(1, batch))));
  budget.steps = std::max<std::int64_t>(budget.steps, 2);
  return budget;
}

Result<std::vector<CompareOutcome>> run_compare(const CompareRequest& request) {
  if (request.entries.empty()) return Status::invalid_input("give at least one method");
  if (request.chains < 1) return Status::invalid_input("--chains needs at least 1");
  Result<Budget> budget = compare_budget(request);
  if (!budget.ok()) return budget.status();
  std::error_code error;
  std::filesystem::create_directories(request.out_dir, error);
  if (error) {
    return Status::io_error(fmt::format("cannot create the output folder {}: {}",
                                        request.out_dir, error.message()));
  }
  if (!request.quiet) {
    std::fprintf(stderr,
                 "every method: %lld steps per chain x %d chains (%.3g epochs of %lld training "
                 "rows, batch %lld)\n",
                 static_cast<long long>(budget->steps), request.chains, request.epochs,
                 static_cast<long long>(budget->train_rows),
                 static_cast<long long>(request.batch_rows));
  }
  AssessJobOptions assess;
  assess.split = AssessSplit::kTest;
  assess.truth_path = request.truth_path;
  assess.metrics.bootstrap.resamples = request.bootstrap;

  std::vector<CompareOutcome> outcomes;
  for (const CompareEntry& entry : request.entries) {
    CompareOutcome outcome;
    outcome.entry = entry;
    TrainRequest train = request_for(request, entry, *budget);
    outcome.run_path = train.out_path;
    Status trained = run_train(train);
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
    outcome.run = std::move(*run);
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

}  // namespace credence::cli
