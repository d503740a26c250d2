// `credence predict`'s whole job as one library call, shared by the command and the
// Python module: open a run file, read its stored CSV settings and positive class, check
// the ensemble fits in memory, build the predictor and stream a data file's predictions
// to a CSV file (or standard output).
//
//   credence::PredictJobOptions job;
//   job.run_path = "faults.h5";
//   job.data_path = "new_units.csv";
//   job.out_path = "predictions.csv";
//   credence::Result<credence::PredictJobResult> done = credence::run_predict_job(job);
#pragma once

#include <optional>
#include <string>

#include "credence/ensemble.h"
#include "credence/predict.h"
#include "credence/status.h"

namespace credence {

struct PredictJobOptions {
  std::string run_path;
  std::string data_path;
  /// Where the CSV goes, written whole or not at all; "-" (predict::kStandardOutput):
  /// standard output.
  std::string out_path = "-";
  /// The CSV's columns and decisions. Its `read` and `positive_class` are set from the run
  /// (the stored delimiter and missing-value tokens; the resolved positive class).
  PredictCsvOptions csv;
  PredictorOptions predictor;  // kept samples used, temperature
  std::optional<UnseenPolicy> unseen;  // overrides the run's unseen-category policy
  /// A class name, as --positive-class; empty: the run's own (resolve_positive_class).
  std::optional<std::string> positive_class;
  /// As --max-memory ("4G"); empty: the default share of physical memory.
  std::string max_memory;
};

struct PredictJobResult {
  PredictCsvSummary summary;
  RunStatus run_status = RunStatus::kComplete;  // not complete: predicted with what it kept
  std::optional<PositiveClass> positive;        // two-class runs
  double temperature = 1;                       // the temperature the members were scaled by
};

/// Runs the job. Blocks of rows run in parallel with OpenMP: a caller whose BLAS is
/// threaded should set it to one thread around the call (the command does so for its
/// whole process). Errors: RunReader::open's; kInvalidInput for a threshold on a run with
/// more than two classes, an unknown positive class, an ensemble over max_memory, and
/// predict_csv's refusals of the data (nothing is written then).
Result<PredictJobResult> run_predict_job(PredictJobOptions options);

}  // namespace credence
