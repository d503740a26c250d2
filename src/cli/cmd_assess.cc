// `credence assess`: calibration and accuracy of a run's ensemble on labelled rows.
#include <cstdio>

#include "credence/assess.h"
#include "report/assess_output.h"
#include "cli/assess_flags.h"
#include "cli/commands.h"
#include "cli/memory_option.h"
#include "credence/ensemble.h"
#include "util/atomic_file.h"
#include "util/log.h"

#ifdef CREDENCE_HAVE_BLAS
extern "C" void openblas_set_num_threads(int);
#endif

namespace credence::cli {
namespace {

Status run_assess(const AssessFlags& flags, const GlobalOptions& global) {
  Result<AssessJobOptions> options = assess_job_options(flags);
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
    const StoredTemperature stored = fitted_temperature_record(*result, committed);
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
  add_decision_flags(*sub, *flags);
  add_max_memory_option(*sub, flags->max_memory);
  commands.push_back({sub, [flags, &global] { return run_assess(*flags, global); }});
}

}  // namespace credence::cli
