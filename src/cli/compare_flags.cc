// The flags of compare and sweep.
#include "cli/compare_flags.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <sstream>

#include "cli/compare_extend.h"
#include "cli/compare_samples.h"
#include "util/atomic_file.h"

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

Result<CompareRequest> compare_request(const CompareFlags& flags, std::vector<Method>& methods) {
  CompareRequest r;
  r.data_path = flags.data_path;
  Result<DataOptions> data = resolve_data_options(flags.data);
  if (!data.ok()) return data.status();
  r.data = *data;
  if (r.data.schema.target.empty()) {
    return Status::invalid_input("give --target COLUMN (the class column)");
  }
  methods.clear();
  std::stringstream stream(flags.methods);
  for (std::string name; std::getline(stream, name, ',');) {
    Result<Method> method = parse_method(name);
    if (!method.ok()) return method.status().with_context("--methods");
    if (*method == Method::kHmc || *method == Method::kRhmc) {
      return Status::invalid_input(fmt::format(
          "--methods: {} uses the full data per step, so it has no minibatch budget to share; "
          "train it on its own with credence train",
          name));
    }
    methods.push_back(*method);
  }
  if (methods.empty()) return Status::invalid_input("--methods: give at least one method");
  // A flag no chosen method reads is refused, as in train (method_flags.h).
  if (flags.samples_option != nullptr && flags.samples_option->count() > 0 &&
      std::none_of(methods.begin(), methods.end(), is_sampler)) {
    return Status::invalid_input(fmt::format(
        "--samples is not read by --methods {}: optimizers keep one final iterate per chain; "
        "add a sampler or drop --samples",
        flags.methods));
  }
  if (!flags.net_path.empty()) {
    r.net_path = flags.net_path;
  } else if (flags.hidden != "none") {
    std::stringstream widths(flags.hidden);
    for (std::string piece; std::getline(widths, piece, ',');) {
      char* end = nullptr;
      const long long width = std::strtoll(piece.c_str(), &end, 10);
      if (piece.empty() || *end != '\0' || width < 1) {
        return Status::invalid_input(
            fmt::format("--hidden '{}': write positive widths like 32,32", flags.hidden));
      }
      r.hidden.push_back(static_cast<Index>(width));
    }
  }
  r.activation = flags.activation;
  r.epochs = flags.epochs;
  r.chains = flags.chains;
  r.batch_rows = flags.batch;
  r.samples = flags.samples;
  r.samples_given = flags.samples_option != nullptr && flags.samples_option->count() > 0;
  r.out_dir = flags.out_dir;
  r.truth_path = flags.truth_path;
  r.bootstrap = flags.bootstrap;
  r.extend_seconds = flags.extend_seconds;
  if (flags.extend_option != nullptr && flags.extend_option->count() > 0 && flags.epochs > 0) {
    return Status::invalid_input(
        "--extend-seconds is not read with --epochs: a budget given in passes is kept as "
        "given; drop one of them");
  }
  if (!(r.extend_seconds >= 0) || !std::isfinite(r.extend_seconds)) {
    return Status::invalid_input("--extend-seconds: give 0 (never) or a positive number of seconds");
  }
  if (flags.chain_seed_option != nullptr && flags.chain_seed_option->count() > 0) {
    r.chain_seed = flags.chain_seed;
  }
  if (r.epochs < 0) return Status::invalid_input("--epochs: give a positive number of passes");
  if (r.chains < 1 || r.batch_rows < 1 || r.samples < 1 || r.bootstrap < 0) {
    return Status::invalid_input(
        "--chains, --batch and --samples need at least 1, and --bootstrap at least 0");
  }
  return r;
}

Status write_output(const std::string& out_dir, const std::string& name, const std::string& text) {
  return write_file_atomically((std::filesystem::path(out_dir) / name).string(), text);
}

}  // namespace credence::cli
