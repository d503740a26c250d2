// run_predict_job: the run file to a CSV of predictions, as `credence predict` does it.
#include "credence/predict_job.h"

#include <fmt/format.h>

#include "credence/assess.h"
#include "predict/ensemble_memory.h"

namespace credence {

Result<PredictJobResult> run_predict_job(PredictJobOptions options) {
  Result<std::unique_ptr<RunReader>> run = RunReader::open(options.run_path);
  if (!run.ok()) return run.status();
  const RunHeader& header = (*run)->header();
  PredictJobResult result;
  result.run_status = (*run)->summary().status;
  options.csv.read = read_options_of(header);
  Result<std::optional<PositiveClass>> positive = resolve_positive_class(
      header.preprocessing, header.settings, options.positive_class);
  if (!positive.ok()) {
    return Status(positive.status().code(), options.run_path + ": " + positive.status().message());
  }
  if (options.csv.threshold && !*positive) {
    return Status::invalid_input(fmt::format(
        "--threshold: a decision threshold applies to two-class targets; '{}' has {} classes",
        header.preprocessing.target, header.preprocessing.class_names.size()));
  }
  if (*positive) options.csv.positive_class = (*positive)->index;
  result.positive = std::move(*positive);
  // Rows are streamed in blocks, so the ensemble and the block workspaces are the peak.
  CREDENCE_RETURN_IF_ERROR(check_ensemble_memory(**run, options.run_path,
                                                 options.predictor.samples, "",
                                                 options.max_memory));
  Result<Predictor> predictor = Predictor::create(**run, options.predictor);
  if (!predictor.ok()) {
    return Status(predictor.status().code(),
                  options.run_path + ": " + predictor.status().message());
  }
  if (options.unseen) predictor->set_unseen_policy(*options.unseen);
  run->reset();  // the samples now live in the predictor
  result.temperature = predictor->temperature();
  Result<PredictCsvSummary> done =
      predict_csv(*predictor, options.data_path, options.out_path, options.csv);
  if (!done.ok()) return done.status();
  result.summary = *done;
  return result;
}

}  // namespace credence
