// `credence assess`: calibration and accuracy of a run's ensemble on labelled rows.
#include <fmt/chrono.h>
#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <ctime>

#include "credence/assess.h"
#include "report/assess_output.h"
#include "cli/commands.h"
#include "cli/data_options.h"
#include "cli/memory_option.h"
#include "credence/ensemble.h"
#include "util/atomic_file.h"
#include "util/log.h"

#ifdef CREDENCE_HAVE_BLAS
extern "C" void openblas_set_num_threads(int);
#endif

namespace credence::cli {
namespace {

struct AssessFlags {
  std::string run_path;
  std::string data_path;
  std::string split = "auto";
  int bins = 15;
  std::string binning = "width";
  std::string json_path;
  std::string plot_path;
  std::int64_t samples = 0;
  int bootstrap = 1000;
  std::uint64_t seed = 0;
  bool temperature_scale = false;
  bool save_temperature = false;
  std::optional<double> temperature;
  std::optional<std::string> unseen;  // overrides the run's unseen-category policy
  std::string truth_path;
  std::optional<std::string> positive_class;
  std::optional<double> threshold;
  std::optional<double> cost_fp;
  std::optional<double> cost_fn;
  std::optional<double> target_sensitivity;
  std::string max_memory;  // --max-memory; empty: the default share of physical memory
};

// At most one rule: a fixed --threshold, costs, or a target sensitivity.
Status threshold_rule(const AssessFlags& flags, ThresholdSettings& t) {
  const bool cost = flags.cost_fp || flags.cost_fn;
  if ((flags.threshold ? 1 : 0) + (cost ? 1 : 0) + (flags.target_sensitivity ? 1 : 0) > 1) {
    return Status::invalid_input(
        "give one way to set the decision threshold: --threshold P, or --cost-fp and "
        "--cost-fn, or --target-sensitivity S");
  }
  if (flags.threshold) {
    if (!(*flags.threshold > 0 && *flags.threshold < 1)) {
      return Status::invalid_input(fmt::format(
          "--threshold {}: give a probability strictly between 0 and 1, e.g. 0.3",
          *flags.threshold));
    }
    t.threshold = *flags.threshold;
  } else if (cost) {
    t.rule = ThresholdRule::kCost;
    t.cost_fp = flags.cost_fp.value_or(1.0);
    t.cost_fn = flags.cost_fn.value_or(1.0);
    if (!(t.cost_fp > 0 && std::isfinite(t.cost_fp) && t.cost_fn > 0 &&
          std::isfinite(t.cost_fn))) {
      return Status::invalid_input(fmt::format(
          "--cost-fp {} --cost-fn {}: give two positive costs (the one not given is 1)",
          t.cost_fp, t.cost_fn));
    }
  } else if (flags.target_sensitivity) {
    t.rule = ThresholdRule::kSensitivity;
    t.target_sensitivity = *flags.target_sensitivity;
    if (!(t.target_sensitivity > 0 && t.target_sensitivity <= 1)) {
      return Status::invalid_input(fmt::format(
          "--target-sensitivity {}: give a fraction in (0, 1], e.g. 0.9", t.target_sensitivity));
    }
  }
  return Status::ok_status();
}

Result<AssessJobOptions> job_options(const AssessFlags& flags) {
  AssessJobOptions o;
  if (flags.split == "auto") {
    o.split = AssessSplit::kAuto;
  } else if (flags.split == "test") {
    o.split = AssessSplit::kTest;
  } else if (flags.split == "val") {
    o.split = AssessSplit::kVal;
  } else if (flags.split == "all") {
    o.split = AssessSplit::kAll;
  } else {
    return Status::invalid_input(fmt::format(
        "--split '{}': use test (the run's held-out rows), val, all (every row) or auto",
        flags.split));
  }
  if (flags.binning == "width") {
    o.binning = Binning::kEqualWidth;
  } else if (flags.binning == "mass") {
    o.binning = Binning::kEqualMass;
  } else {
    return Status::invalid_input(fmt::format(
        "--binning '{}': use width (equal-width bins) or mass (equal counts per bin)",
        flags.binning));
  }
  if (flags.bins < 1 || flags.bins > 1000) {
    return Status::invalid_input(fmt::format("--bins {}: give 1 to 1000 (15 is usual)", flags.bins));
  }
  if (flags.samples < 0) {
    return Status::invalid_input(fmt::format(
        "--samples {}: give a positive count (or 0 for all kept samples)", flags.samples));
  }
  if (flags.bootstrap < 0) {
    return Status::invalid_input(fmt::format(
        "--bootstrap {}: give a number of resamples (0 for no intervals)", flags.bootstrap));
  }
  if (flags.temperature && !(*flags.temperature > 0 && std::isfinite(*flags.temperature))) {
    return Status::invalid_input(
        fmt::format("--temperature {}: give a positive number", *flags.temperature));
  }
  if (flags.save_temperature && !flags.temperature_scale) {
    return Status::invalid_input("--save-temperature stores the temperature that "
                                 "--temperature-scale fits; give both");
  }
  if (flags.temperature && flags.temperature_scale) {
    return Status::invalid_input("give either --temperature (a fixed value) or "
                                 "--temperature-scale (fit one), not both");
  }
  CREDENCE_RETURN_IF_ERROR(threshold_rule(flags, o.threshold));
  o.positive_class = flags.positive_class;
  o.metrics.bins = flags.bins;
  o.metrics.classwise_bins = flags.bins;
  o.metrics.curve_bins = flags.bins;
  o.metrics.bootstrap.resamples = flags.bootstrap;
  o.metrics.bootstrap.seed = flags.seed;
  o.metrics.bootstrap.ece_bins = flags.bins;
  o.metrics.bootstrap.ece_binning = o.binning;
  o.samples = flags.samples;
  o.temperature = flags.temperature;
  o.fit_temperature = flags.temperature_scale;
  o.truth_path = flags.truth_path;
  if (flags.unseen) {
    Result<UnseenPolicy> unseen = parse_unseen_flag(*flags.unseen);
    if (!unseen.ok()) return unseen.status();
    o.unseen = *unseen;
  }
  return o;
}

Status run_assess(const AssessFlags& flags, const GlobalOptions& global) {
  Result<AssessJobOptions> options = job_options(flags);
  if (!options.ok()) return options.status();
#ifdef CREDENCE_HAVE_BLAS
  openblas_set_num_threads(1);  // row blocks run in parallel (DESIGN.md section 6)
#endif
  Result<std::unique_ptr<RunReader>> run = RunReader::open(flags.run_path);
  if (!run.ok()) return run.status();
  if (RunStatus status = (*run)->summary().status; status != RunStatus::kComplete) {
    log().warn("{}: the run is {}; assessing the samples it kept so far", flags.run_path,
               run_status_name(status));
  }
  if (flags.save_temperature && flags.samples != 0 && flags.samples < (*run)->summary().samples) {
    return Status::invalid_input(
        "--save-temperature fits the whole ensemble; drop --samples to store it");
  }
  // The data table is read whole, then the ensemble evaluated on it.
  CREDENCE_RETURN_IF_ERROR(check_ensemble_memory(**run, flags.run_path, flags.samples,
                                                 flags.data_path, flags.max_memory));
  Result<AssessJobResult> result = run_assess_job(**run, flags.data_path, *options);
  if (!result.ok()) return result.status();
  const std::int64_t committed = (*run)->summary().samples;
  run->reset();  // closed before the file may be written below

  AssessHeadline headline{flags.run_path, flags.data_path, options->binning};
  if (!flags.json_path.empty()) {
    CREDENCE_RETURN_IF_ERROR(write_file_atomically(flags.json_path, assess_json(*result, headline)));
  }
  if (!flags.plot_path.empty()) {
    CREDENCE_RETURN_IF_ERROR(
        write_file_atomically(flags.plot_path, assess_plot(*result, headline)));
  }
  std::fputs(assess_text(*result, headline).c_str(), stdout);
  std::fflush(stdout);

  if (flags.save_temperature && result->fit) {
    StoredTemperature stored;
    stored.temperature = result->fit->temperature;
    stored.samples = committed;
    stored.fitted_on = fmt::format("validation split, {} rows", result->val_rows);
    stored.nll_before = result->fit->nll_before;
    stored.nll_after = result->fit->nll_after;
    stored.fitted_utc = fmt::format("{:%Y-%m-%dT%H:%M:%SZ}", fmt::gmtime(std::time(nullptr)));
    CREDENCE_RETURN_IF_ERROR(store_temperature(flags.run_path, stored));
    if (!global.quiet) {
      std::fprintf(stderr,
                   "stored temperature %.4g in %s; predict now divides every member's logits "
                   "by it (--temperature 1 turns it off)\n",
                   stored.temperature, flags.run_path.c_str());
    }
  }
  return Status::ok_status();
}

}  // namespace

void add_assess_command(CLI::App& app, const GlobalOptions& global, CommandList& commands) {
  auto flags = std::make_shared<AssessFlags>();
  CLI::App* sub = app.add_subcommand(
      "assess",
      "Calibration and accuracy of a run's ensemble on labelled rows: NLL, Brier score, ECE "
      "and MCE, reliability table, AUROC, accuracy when abstaining, with bootstrap intervals");
  sub->add_option("RUN.h5", flags->run_path, "The run file written by train")->required();
  sub->add_option("DATA.csv", flags->data_path,
                  "Labelled rows: the run's own data file (for --split test or val) or a new "
                  "table with the target column")
      ->required();
  sub->add_option("--split", flags->split,
                  "test: the run's held-out rows; val: its validation rows; all: every row; "
                  "auto: test when DATA.csv is the run's data file, else all")
      ->capture_default_str();
  sub->add_option("--bins", flags->bins, "Bins for ECE, MCE and the reliability table")
      ->capture_default_str();
  sub->add_option("--binning", flags->binning,
                  "Headline binning: width (equal-width bins) or mass (equal rows per bin); "
                  "both ECEs are always reported")
      ->capture_default_str();
  sub->add_option("--json", flags->json_path, "Also write every number as JSON to FILE");
  sub->add_option("--plot", flags->plot_path, "Write a reliability diagram to FILE.svg");
  sub->add_option("--samples", flags->samples,
                  "Use N kept samples spread evenly over the ensemble (default: all)");
  sub->add_option("--bootstrap", flags->bootstrap,
                  "Resamples for the 95% intervals of NLL, Brier and ECE (0: none)")
      ->capture_default_str();
  sub->add_option("--seed", flags->seed, "Seed of the bootstrap resamples")->capture_default_str();
  sub->add_flag("--temperature-scale", flags->temperature_scale,
                "Fit one temperature on the run's validation rows (minimum NLL) and report the "
                "metrics before and after");
  sub->add_flag("--save-temperature", flags->save_temperature,
                "Store the fitted temperature in the run file; predict then uses it");
  sub->add_option("--temperature", flags->temperature,
                  "Score with this member-wise temperature instead of the run's stored one");
  sub->add_option("--unseen", flags->unseen,
                  "A category the training rows never showed: error, or ignore (all zeros); "
                  "default: the policy the run was trained with");
  sub->add_option("--truth", flags->truth_path,
                  "A synth truth file: also score the probabilities against the true ones");
  sub->add_option("--positive-class", flags->positive_class,
                  "Two classes: the class decisions and curves are about (default: the run's, "
                  "else the class that sorts second)")
      ->group("Decisions");
  sub->add_option("--threshold", flags->threshold,
                  "Decide 'positive' where its probability is at least P (default 0.5)")
      ->group("Decisions");
  sub->add_option("--cost-fp", flags->cost_fp,
                  "Cost of a false positive: choose the threshold of least total cost on the "
                  "run's validation rows (with --cost-fn; the one not given is 1)")
      ->group("Decisions");
  sub->add_option("--cost-fn", flags->cost_fn, "Cost of a false negative (see --cost-fp)")
      ->group("Decisions");
  sub->add_option("--target-sensitivity", flags->target_sensitivity,
                  "Choose the highest threshold whose sensitivity on the run's validation rows "
                  "reaches S")
      ->group("Decisions");
  add_max_memory_option(*sub, flags->max_memory);
  commands.push_back({sub, [flags, &global] { return run_assess(*flags, global); }});
}

}  // namespace credence::cli
