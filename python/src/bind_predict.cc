// predict_file: `credence predict`'s work (predict_csv) on files the Python layer names,
// so a DataFrame's predictions have the same columns and digits as the command's CSV.
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <cmath>
#include <optional>

#include "bindings.h"
#include "blas_threads.h"
#include "credence/assess.h"
#include "credence/ensemble.h"
#include "credence/predict.h"
#include "credence/predict_job.h"
#include "status_error.h"
#include "unseen_option.h"

namespace py = pybind11;

namespace credence::python {
namespace {

struct PredictCall {
  std::string run_path;
  std::string input_path;
  std::string output_path;
  std::int64_t samples = 0;
  std::optional<double> temperature;
  std::optional<double> flag_above;
  std::string flag_by = "entropy";
  std::optional<std::string> unseen;
  std::vector<std::string> id_columns;
};

PredictCsvOptions csv_options(const PredictCall& call) {
  PredictCsvOptions options;
  if (call.flag_by == "entropy") {
    options.flag_by = FlagBy::kEntropy;
  } else if (call.flag_by == "mi") {
    options.flag_by = FlagBy::kMutualInformation;
  } else {
    throw StatusError(Status::invalid_input(
        "flag_by='" + call.flag_by + "': use 'entropy' (total doubt) or 'mi' (doubt from lack of data)"));
  }
  if (call.flag_above && !std::isfinite(*call.flag_above)) {
    throw StatusError(Status::invalid_input("flag_above needs a finite number of nats, e.g. 0.5"));
  }
  options.flag_above = call.flag_above;
  options.id_columns = call.id_columns;
  return options;
}

py::dict predict_file(const PredictCall& call) {
  if (call.samples < 0) {
    throw StatusError(Status::invalid_input(
        "samples=" + std::to_string(call.samples) + ": give a positive count (or 0 for all kept samples)"));
  }
  if (call.temperature && !(*call.temperature > 0 && std::isfinite(*call.temperature))) {
    throw StatusError(Status::invalid_input(
        "temperature: give a positive number (1 leaves the members as trained)"));
  }
  std::optional<UnseenPolicy> unseen;
  if (call.unseen) unseen = parse_unseen(*call.unseen);
  PredictJobOptions job;
  job.run_path = call.run_path;
  job.data_path = call.input_path;
  job.out_path = call.output_path;
  job.csv = csv_options(call);
  job.predictor.samples = call.samples;
  job.predictor.temperature = call.temperature;
  job.unseen = unseen;
  PredictJobResult result;
  {
    py::gil_scoped_release release;
    // As `credence predict` does it, with BLAS on one thread while blocks run in parallel.
    result = with_one_blas_thread([&] { return take(run_predict_job(std::move(job))); });
  }
  const PredictCsvSummary& done = result.summary;
  const double temperature = result.temperature;
  py::dict out;
  out["rows"] = done.rows;
  out["samples"] = done.samples;
  out["flagged"] = done.flagged;
  out["clamped"] = done.clamped;
  out["id_columns"] = done.id_columns;
  out["target_passed"] = done.target_passed;
  out["ignored_columns"] = done.ignored_columns;
  out["temperature"] = temperature;
  return out;
}

}  // namespace

void bind_predict(py::module_& m) {
  m.def(
      "predict_file",
      [](std::string run_path, std::string input_path, std::string output_path,
         std::int64_t samples, std::optional<double> temperature,
         std::optional<double> flag_above, std::string flag_by,
         std::optional<std::string> unseen, std::vector<std::string> id_columns) {
        PredictCall call{std::move(run_path), std::move(input_path), std::move(output_path),
                         samples, temperature, flag_above, std::move(flag_by),
                         std::move(unseen), std::move(id_columns)};
        return predict_file(call);
      },
      py::arg("run_path"), py::arg("input_path"), py::arg("output_path"),
      py::arg("samples") = 0, py::arg("temperature") = py::none(),
      py::arg("flag_above") = py::none(), py::arg("flag_by") = "entropy",
      py::arg("unseen") = py::none(), py::arg("id_columns") = std::vector<std::string>{},
      "Predicts every row of input_path into output_path, as `credence predict` does.");
}

}  // namespace credence::python
