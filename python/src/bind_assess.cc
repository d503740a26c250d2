// assess_json and diagnose_json: the documents `credence assess --json` and
// `credence diagnose --json` write, built by the same library calls.
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <cmath>
#include <optional>

#include "bindings.h"
#include "blas_threads.h"
#include "credence/assess.h"
#include "credence/ensemble.h"
#include "credence/run_diagnostics.h"
#include "credence/run_verdict.h"
#include "report/assess_output.h"
#include "credence/prior_summary.h"
#include "report/diagnose_output.h"
#include "status_error.h"
#include "unseen_option.h"

namespace py = pybind11;

namespace credence::python {
namespace {

struct AssessCall {
  std::string run_path;
  std::string data_path;
  std::string split = "auto";
  int bins = 15;
  std::string binning = "width";
  std::int64_t samples = 0;
  int bootstrap = 1000;
  std::uint64_t seed = 0;
  bool fit_temperature = false;
  std::optional<double> temperature;
  std::optional<std::string> unseen;
  std::string truth_path;
};

Status invalid(const std::string& message) { return Status::invalid_input(message); }

// The keywords as AssessJobOptions, refused with the same rules as assess's flags.
AssessJobOptions job_options(const AssessCall& c) {
  AssessJobOptions o;
  if (c.split == "auto") {
    o.split = AssessSplit::kAuto;
  } else if (c.split == "test") {
    o.split = AssessSplit::kTest;
  } else if (c.split == "val") {
    o.split = AssessSplit::kVal;
  } else if (c.split == "all") {
    o.split = AssessSplit::kAll;
  } else {
    throw StatusError(invalid("split='" + c.split +
                              "': use 'test' (the run's held-out rows), 'val', 'all' (every "
                              "row) or 'auto'"));
  }
  if (c.binning == "width") {
    o.binning = Binning::kEqualWidth;
  } else if (c.binning == "mass") {
    o.binning = Binning::kEqualMass;
  } else {
    throw StatusError(invalid("binning='" + c.binning +
                              "': use 'width' (equal-width bins) or 'mass' (equal counts per bin)"));
  }
  if (c.bins < 1 || c.bins > 1000) {
    throw StatusError(invalid("bins=" + std::to_string(c.bins) + ": give 1 to 1000 (15 is usual)"));
  }
  if (c.samples < 0) {
    throw StatusError(invalid("samples=" + std::to_string(c.samples) +
                              ": give a positive count (or 0 for all kept samples)"));
  }
  if (c.bootstrap < 0) {
    throw StatusError(invalid("bootstrap=" + std::to_string(c.bootstrap) +
                              ": give a number of resamples (0 for no intervals)"));
  }
  if (c.temperature && !(*c.temperature > 0 && std::isfinite(*c.temperature))) {
    throw StatusError(invalid("temperature: give a positive number"));
  }
  if (c.temperature && c.fit_temperature) {
    throw StatusError(invalid("give either temperature (a fixed value) or fit_temperature=True "
                              "(fit one), not both"));
  }
  o.metrics.bins = c.bins;
  o.metrics.classwise_bins = c.bins;
  o.metrics.curve_bins = c.bins;
  o.metrics.bootstrap.resamples = c.bootstrap;
  o.metrics.bootstrap.seed = c.seed;
  o.metrics.bootstrap.ece_bins = c.bins;
  o.metrics.bootstrap.ece_binning = o.binning;
  o.samples = c.samples;
  o.temperature = c.temperature;
  o.fit_temperature = c.fit_temperature;
  o.truth_path = c.truth_path;
  if (c.unseen) o.unseen = parse_unseen(*c.unseen);
  return o;
}

std::string assess_json_of(const AssessCall& call) {
  const AssessJobOptions options = job_options(call);
  py::gil_scoped_release release;
  std::unique_ptr<RunReader> run = take(RunReader::open(call.run_path));
  AssessJobResult result =
      with_one_blas_thread([&] { return take(run_assess_job(*run, call.data_path, options)); });
  return assess_json(result, AssessHeadline{call.run_path, call.data_path, options.binning});
}

std::string diagnose_json_of(const std::string& run_path) {
  py::gil_scoped_release release;
  std::unique_ptr<RunReader> run = take(RunReader::open(run_path));
  Result<RunDiagnostics> diagnostics = diagnose_run(*run);
  if (!diagnostics.ok()) {
    throw StatusError(diagnostics.status().with_context("diagnosing " + run_path));
  }
  // As `credence diagnose`: without the data the probe rows' labels are unknown.
  std::optional<RunVerdict> verdict;
  if (Result<RunEvidence> evidence = gather_run_evidence(*run); evidence.ok()) {
    verdict = judge_run(*evidence);
  }
  Result<Eigen::MatrixXd> precisions = run->prior_precisions();
  if (!precisions.ok()) throw StatusError(precisions.status());
  // The kernel Stein discrepancy at diagnose's defaults (the table the run file records).
  RunStein stein = with_one_blas_thread([&] { return take(run_stein_discrepancy(*run, {})); });
  return diagnose_json(run_path, *diagnostics, summarize_prior_precisions(*precisions), verdict,
                       stein);
}

}  // namespace

void bind_assess(py::module_& m) {
  m.def(
      "assess_json",
      [](std::string run_path, std::string data_path, std::string split, int bins,
         std::string binning, std::int64_t samples, int bootstrap, std::uint64_t seed,
         bool fit_temperature, std::optional<double> temperature,
         std::optional<std::string> unseen, std::string truth_path) {
        return assess_json_of(AssessCall{std::move(run_path), std::move(data_path),
                                         std::move(split), bins, std::move(binning), samples,
                                         bootstrap, seed, fit_temperature, temperature,
                                         std::move(unseen), std::move(truth_path)});
      },
      py::arg("run_path"), py::arg("data_path"), py::arg("split") = "auto",
      py::arg("bins") = 15, py::arg("binning") = "width", py::arg("samples") = 0,
      py::arg("bootstrap") = 1000, py::arg("seed") = 0, py::arg("fit_temperature") = false,
      py::arg("temperature") = py::none(), py::arg("unseen") = py::none(),
      py::arg("truth_path") = "",
      "The JSON document of `credence assess --json` (names: docs/assess-json.md).");
  m.def("diagnose_json", &diagnose_json_of, py::arg("run_path"),
        "The JSON document of `credence diagnose --json` (names: docs/diagnostics.md).");
}

}  // namespace credence::python
