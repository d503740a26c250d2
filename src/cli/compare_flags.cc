// The flags of compare and sweep.
#include "cli/compare_flags.h"

#include <fmt/format.h>

#include <cstdio>

#include "cli/interrupt.h"
#include "cli/progress.h"
#include "cli/train_flags.h"
#include "compare/compare_extend.h"
#include "compare/compare_samples.h"

namespace credence::cli {

void add_compare_flags(CLI::App& command, CompareFlags& flags, const std::string& default_methods) {
  flags.methods = default_methods;
  command.add_option("data", flags.data_path, "The labelled table (CSV with a header row)")
      ->required();
  add_data_options(command, flags.data);
  command.add_option("--methods", flags.methods, "Comma-separated methods")
      ->capture_default_str();
  command.add_option("--hidden", flags.hidden, "Hidden layer widths of the one network")
      ->capture_default_str();
  command.add_option("--activation", flags.activation, "relu, tanh, sigmoid, softplus, identity")
      ->capture_default_str();
  command.add_option("--net", flags.net_path, "Net file instead of --hidden/--activation");
  command
      .add_option("--linear-path", flags.linear_path,
                  "on: every method's network adds a linear map from the inputs to the outputs "
                  "beside the hidden layers, with prior blocks of its own (docs/prior.md, 'The "
                  "linear path'); off: the hidden layers alone")
      ->capture_default_str();
  command.add_option("--epochs", flags.epochs,
                     fmt::format("Gradient budget per chain, in passes over the training rows "
                                 "(the same for every method) [default: sized to the table, as a "
                                 "sampler's train defaults: burn-in max({} steps, {:g} passes; "
                                 "{} steps up to {} training rows, falling as 1/rows), "
                                 "at most {}, then as much again to sample and at least {} steps "
                                 "per kept sample]",
                                 BudgetDefaults::kSamplerBurnInFloor,
                                 BudgetDefaults::kSamplerBurnInPasses,
                                 BudgetDefaults::kSamplerSmallTableFloor,
                                 BudgetDefaults::kSamplerSmallTableRows,
                                 BudgetDefaults::kSamplerPhaseCap,
                                 BudgetDefaults::kSamplerThinFloor));
  command.add_option("--chains", flags.chains,
                     "Chains per method (optimizers: independent restarts, averaged)")
      ->capture_default_str();
  command.add_option("--batch", flags.batch, "Minibatch rows")->capture_default_str();
  flags.samples_option =
      command.add_option("--samples", flags.samples,
                         fmt::format("Kept samples per chain for samplers [default: {}, so that "
                                     "R-hat over every probe row can resolve 1.01; fewer when a "
                                     "run file would pass {} MiB]",
                                     kCompareRhatDraws, kCompareSampleBytes >> 20));
  command.add_option("--out", flags.out_dir, "Folder for the run files, tables and report")
      ->required();
  command.add_option("--truth", flags.truth_path,
                     "A synth truth file: also score against the true probabilities");
  command.add_option("--bootstrap", flags.bootstrap, "Bootstrap resamples for the intervals")
      ->capture_default_str();
  flags.extend_option =
      command
          .add_option("--extend-seconds", flags.extend_seconds,
                      fmt::format("A sampler whose end-of-run verdict is not done is re-run once "
                                  "from the start with a longer budget: the verdict's estimate, "
                                  "at most {} steps per chain and as many as the first run's "
                                  "speed fits in this many seconds (no re-run when that is under "
                                  "twice the first run); 0: never. Not with --epochs, whose "
                                  "budget is kept as given",
                                  kExtendMaxSteps))
          ->capture_default_str();
  flags.chain_seed_option = command.add_option(
      "--chain-seed", flags.chain_seed,
      "Seed of every method's chains (starting points, minibatch order, noise), apart from the "
      "split's --seed; default: --seed. Comparisons with one --seed and different chain seeds "
      "share their split, so their run files can be merged");
}

Result<CompareRequest> compare_request(const CompareFlags& flags, std::vector<Method>& methods,
                                       bool full_batch_allowed) {
  CompareRequest r;
  r.data_path = flags.data_path;
  Result<DataOptions> data = resolve_data_options(flags.data);
  if (!data.ok()) return data.status();
  r.data = *data;
  r.net_path = flags.net_path;
  r.activation = flags.activation;
  Result<bool> linear_path = parse_linear_path(flags.linear_path);
  if (!linear_path.ok()) return linear_path.status();
  r.linear_path = *linear_path;
  r.epochs = flags.epochs;
  r.chains = flags.chains;
  r.batch_rows = flags.batch;
  r.samples = flags.samples;
  r.samples_given = flags.samples_option != nullptr && flags.samples_option->count() > 0;
  r.out_dir = flags.out_dir;
  r.truth_path = flags.truth_path;
  r.bootstrap = flags.bootstrap;
  r.extend_seconds = flags.extend_seconds;
  if (flags.chain_seed_option != nullptr && flags.chain_seed_option->count() > 0) {
    r.chain_seed = flags.chain_seed;
  }
  const CompareLists lists{
      .methods = flags.methods,
      .hidden = flags.hidden,
      .extend_given = flags.extend_option != nullptr && flags.extend_option->count() > 0,
      .full_batch_allowed = full_batch_allowed};
  Result<std::vector<Method>> chosen = complete_compare_request(r, lists);
  if (!chosen.ok()) return chosen.status();
  methods = std::move(*chosen);
  return r;
}

void set_compare_hooks(CompareRequest& request, const GlobalOptions& global) {
  request.hooks.stop = &install_interrupt_handlers();
  request.hooks.progress = progress_line(global.quiet);
  if (!global.quiet) {
    request.on_budget = [](const std::string& line) { std::fprintf(stderr, "%s\n", line.c_str()); };
  }
  request.command_line = global.command_line;
}

}  // namespace credence::cli
