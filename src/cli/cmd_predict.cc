// `credence predict`: per-row class probabilities and uncertainty for new rows.
#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <optional>

#include "cli/commands.h"
#include "cli/data_options.h"
#include "cli/memory_option.h"
#include "credence/run_settings.h"
#include "credence/ensemble.h"
#include "credence/predict.h"
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
  std::string max_memory;  // --max-memory; empty: the default share of physical memory
};

// The delimiter and missing-value tokens the run was trained with.
ReadOptions stored_read_options(const RunHeader& header) {
  TrainSettings ignored;
  ReadOptions read;
  if (Status s = from_values(header.settings, ignored, read); !s.ok()) {
    log().warn(
        "reading the run's CSV settings: {}; reading the new rows with the defaults "
        "(comma separated; missing: '', NA, NaN, null, ?)",
        s.message());
    return ReadOptions{};
  }
  return read;
}

Status run_predict(const PredictFlags& flags, const GlobalOptions& global) {
  if (flags.out.empty()) return Status::invalid_input("give --out PRED.csv for the predictions");
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

#ifdef CREDENCE_HAVE_BLAS
  // Blocks run in parallel with OpenMP; BLAS threads inside each would fight them
  // for the cores (DESIGN.md section 6).
  openblas_set_num_threads(1);
#endif
  Result<std::unique_ptr<RunReader>> run = RunReader::open(flags.run_path);
  if (!run.ok()) return run.status();
  const RunHeader& header = (*run)->header();
  if (RunStatus status = (*run)->summary().status; status != RunStatus::kComplete) {
    log().warn("{}: the run is {}; predicting with the samples it kept so far", flags.run_path,
               run_status_name(status));
  }
  options.read = stored_read_options(header);
  // Rows are streamed in blocks, so the ensemble and the block workspaces are the peak.
  CREDENCE_RETURN_IF_ERROR(
      check_ensemble_memory(**run, flags.run_path, flags.samples, "", flags.max_memory));
  PredictorOptions predictor_options;
  predictor_options.samples = flags.samples;
  predictor_options.temperature = flags.temperature;
  if (flags.temperature && !(*flags.temperature > 0 && std::isfinite(*flags.temperature))) {
    return Status::invalid_input(fmt::format(
        "--temperature {}: give a positive number (1 leaves the members as trained)",
        *flags.temperature));
  }
  std::optional<UnseenPolicy> unseen;
  if (flags.unseen) {
    Result<UnseenPolicy> parsed = parse_unseen_flag(*flags.unseen);
    if (!parsed.ok()) return parsed.status();
    unseen = *parsed;
  }
  Result<Predictor> predictor = Predictor::create(**run, predictor_options);
  if (!predictor.ok()) {
    return Status(predictor.status().code(), flags.run_path + ": " + predictor.status().message());
  }
  if (unseen) predictor->set_unseen_policy(*unseen);
  run->reset();  // the samples now live in the predictor
  if (predictor->temperature() != 1.0 && !flags.temperature && !global.quiet) {
    std::fprintf(stderr,
                 "using the temperature %.4g stored in the run (assess --save-temperature); "
                 "--temperature 1 turns it off\n",
                 predictor->temperature());
  }

  Result<PredictCsvSummary> done = predict_csv(*predictor, flags.data_path, flags.out, options);
  if (!done.ok()) return done.status();
  if (!global.quiet) {
    std::string line = fmt::format("predicted {} rows with {} samples into {}", done->rows,
                                   done->samples, flags.out);
    if (options.flag_above) {
      line += fmt::format("; {} rows flagged for referral ({} > {})", done->flagged,
                          flag_by_name(options.flag_by), *options.flag_above);
    }
    if (done->clamped > 0) {
      line += fmt::format("; mutual information rounded below 0 and set to 0 in {} rows",
                          done->clamped);
    }
    std::fprintf(stderr, "%s\n", line.c_str());
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
  sub->add_option("--out", flags->out, "Where to write the predictions CSV");
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
  add_max_memory_option(*sub, flags->max_memory);
  commands.push_back({sub, [flags, &global] { return run_predict(*flags, global); }});
}

}  // namespace credence::cli
