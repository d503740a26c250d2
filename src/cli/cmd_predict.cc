// `credence predict`: per-row class probabilities and uncertainty for new rows.
#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <optional>

#include "cli/commands.h"
#include "cli/data_options.h"
#include "cli/memory_option.h"
#include "credence/ensemble.h"
#include "credence/predict.h"
#include "credence/predict_job.h"
#include "predict/temp_output.h"
#include "util/log.h"

#ifdef CREDENCE_HAVE_BLAS
extern "C" void openblas_set_num_threads(int);
#endif


namespace credence::cli {
namespace {

struct PredictFlags {
  std::string run_path;
  std::string data_path;
  std::string out;
  std::vector<std::string> id;
  std::int64_t samples = 0;
  std::optional<double> flag_above;
  std::string flag_by = "entropy";
  std::optional<double> temperature;
  std::optional<std::string> unseen;  // overrides the run's unseen-category policy
  std::optional<std::string> positive_class;
  std::optional<double> threshold;
  double interval = 0.90;
  std::vector<std::string> keep;
  double outside_above = 10;
  std::string max_memory;  // --max-memory; empty: the default share of physical memory
};

Status run_predict(const PredictFlags& flags, const GlobalOptions& global) {
  if (flags.samples < 0) {
    return Status::invalid_input(fmt::format(
        "--samples {}: give a positive count (or 0 for all kept samples)", flags.samples));
  }
  PredictCsvOptions options;
  if (flags.flag_by == "entropy") {
    options.flag_by = FlagBy::kEntropy;
  } else if (flags.flag_by == "mi") {
    options.flag_by = FlagBy::kMutualInformation;
  } else {
    return Status::invalid_input(
        fmt::format("--flag-by '{}': use entropy (total doubt) or mi (doubt from lack of data)",
                    flags.flag_by));
  }
  if (flags.flag_above && !std::isfinite(*flags.flag_above)) {
    return Status::invalid_input("--flag-above needs a finite number of nats, e.g. 0.5");
  }
  options.flag_above = flags.flag_above;
  options.id_columns = flags.id;
  options.keep_columns = flags.keep;
  if (flags.threshold && !(*flags.threshold > 0 && *flags.threshold < 1)) {
    return Status::invalid_input(fmt::format(
        "--threshold {}: give a probability strictly between 0 and 1, e.g. 0.3",
        *flags.threshold));
  }
  options.threshold = flags.threshold;
  if (!(flags.interval > 0 && flags.interval < 1) && flags.interval != 0) {
    return Status::invalid_input(fmt::format(
        "--interval {}: give a level strictly between 0 and 1, e.g. 0.9 (0: no interval)",
        flags.interval));
  }
  options.interval_level = flags.interval;
  if (!(flags.outside_above > 0 && std::isfinite(flags.outside_above))) {
    return Status::invalid_input(fmt::format(
        "--outside-above {}: give a positive number of training standard deviations, e.g. 10",
        flags.outside_above));
  }
  options.outside_z = flags.outside_above;

  if (flags.temperature && !(*flags.temperature > 0 && std::isfinite(*flags.temperature))) {
    return Status::invalid_input(fmt::format(
        "--temperature {}: give a positive number (1 leaves the members as trained)",
        *flags.temperature));
  }
#ifdef CREDENCE_HAVE_BLAS
  // Blocks run in parallel with OpenMP; BLAS threads inside each would fight them for the
  // cores.
  openblas_set_num_threads(1);
#endif
  PredictJobOptions job;
  job.run_path = flags.run_path;
  job.data_path = flags.data_path;
  job.csv = options;
  job.predictor.samples = flags.samples;
  job.predictor.temperature = flags.temperature;
  if (flags.unseen) {
    Result<UnseenPolicy> parsed = parse_unseen_flag(*flags.unseen);
    if (!parsed.ok()) return parsed.status();
    job.unseen = *parsed;
  }
  job.positive_class = flags.positive_class;
  job.max_memory = flags.max_memory;
  // No --out (or --out -): the CSV goes to standard output, whole or not at all.
  job.out_path = flags.out.empty() ? std::string(predict::kStandardOutput) : flags.out;
  const std::string out = job.out_path;
  Result<PredictJobResult> result = run_predict_job(std::move(job));
  if (!result.ok()) return result.status();
  if (result->run_status != RunStatus::kComplete) {
    log().warn("{}: the run is {}; predicted with the samples it kept so far", flags.run_path,
               run_status_name(result->run_status));
  }
  if (result->temperature != 1.0 && !flags.temperature && !global.quiet) {
    std::fprintf(stderr,
                 "used the temperature %.4g stored in the run (assess --save-temperature); "
                 "--temperature 1 turns it off\n",
                 result->temperature);
  }
  const PredictCsvSummary* done = &result->summary;
  const std::optional<PositiveClass>* positive = &result->positive;
  if (!global.quiet) {
    std::string line = fmt::format("predicted {} rows with {} samples into {}", done->rows,
                                   done->samples,
                                   out == predict::kStandardOutput ? "standard output" : out);
    if (options.flag_above) {
      line += fmt::format("; {} rows flagged for referral ({} > {})", done->flagged,
                          flag_by_name(options.flag_by), *options.flag_above);
    }
    if (*positive) {
      line += fmt::format("; positive class '{}' ({})", (*positive)->name, (*positive)->chosen_by);
      line += options.threshold
                  ? fmt::format(", predicted where P({}) >= {}", (*positive)->name,
                                *options.threshold)
                  : std::string(", predicted: the more probable class");
    }
    if (done->row_numbers) line += "; no id column, so a 'row' column numbers the data rows";
    if (done->clamped > 0) {
      line += fmt::format("; mutual information rounded below 0 and set to 0 in {} rows",
                          done->clamped);
    }
    std::fprintf(stderr, "%s\n", line.c_str());
  }
  if (done->outside > 0) {
    log().warn(
        "{}: {} of {} rows lie outside the training range (an input more than {} training "
        "standard deviations from its mean, or a category training never showed; column "
        "'outside'). Their probabilities and doubt are extrapolations: check these rows",
        flags.data_path, done->outside, done->rows, options.outside_z);
  }
  return Status::ok_status();
}

}  // namespace

void add_predict_command(CLI::App& app, const GlobalOptions& global, CommandList& commands) {
  auto flags = std::make_shared<PredictFlags>();
  CLI::App* sub = app.add_subcommand(
      "predict",
      "Class probabilities of new rows from a run's ensemble, with their doubt split into "
      "noise (expected entropy) and lack of data (mutual information)");
  sub->add_option("RUN.h5", flags->run_path, "The run file written by train")->required();
  sub->add_option("NEW.csv", flags->data_path, "Rows to predict, with the model's input columns")
      ->required();
  sub->add_option("--out", flags->out,
                  "Where to write the predictions CSV (default, or '-': standard output, "
                  "written once every row is predicted)");
  sub->add_option("--id", flags->id,
                  "Columns passed through to identify rows (default: the run's id columns)")
      ->delimiter(',');
  sub->add_option("--samples", flags->samples,
                  "Use N kept samples spread evenly over the ensemble (default: all)");
  sub->add_option("--flag-above", flags->flag_above,
                  "Add a 'refer' column: 1 where the chosen uncertainty (nats) exceeds X");
  sub->add_option("--flag-by", flags->flag_by,
                  "Uncertainty compared with --flag-above: entropy (total) or mi (epistemic)")
      ->capture_default_str();
  sub->add_option("--temperature", flags->temperature,
                  "Divide every member's logits by T before averaging (default: the "
                  "temperature stored by assess --save-temperature, else 1)");
  sub->add_option("--unseen", flags->unseen,
                  "A category the training rows never showed: error, or ignore (all zeros, "
                  "one warning per column); default: the policy the run was trained with");
  sub->add_option("--positive-class", flags->positive_class,
                  "Two classes: the class the threshold and the interval are about (default: "
                  "the run's, else the class that sorts second)");
  sub->add_option("--threshold", flags->threshold,
                  "Two classes: 'predicted' is the positive class where its probability is at "
                  "least P (default: the more probable class)");
  sub->add_option("--interval", flags->interval,
                  "Level of each row's credible interval of the positive class's probability "
                  "(of every class's, for more classes) across kept samples; 0: none")
      ->capture_default_str();
  sub->add_option("--keep", flags->keep, "Input columns passed through to the output")
      ->delimiter(',');
  sub->add_option("--outside-above", flags->outside_above,
                  "Mark a row 'outside' when an input lies more than Z training standard "
                  "deviations from its mean (or holds an unseen category)")
      ->capture_default_str();
  add_max_memory_option(*sub, flags->max_memory);
  commands.push_back({sub, [flags, &global] { return run_predict(*flags, global); }});
}

}  // namespace credence::cli
