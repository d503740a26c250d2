// open_run: a run file's header, settings, preprocessing and kept samples as Python
// values and numpy arrays (the same fields `credence inspect` reads).
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <algorithm>
#include <variant>

#include "bindings.h"
#include "credence/ensemble.h"
#include "status_error.h"

namespace py = pybind11;

namespace credence::python {
namespace {

template <typename T>
py::array_t<T> to_numpy(const std::vector<T>& values) {
  py::array_t<T> out(static_cast<py::ssize_t>(values.size()));
  std::copy(values.begin(), values.end(), out.mutable_data());
  return out;
}

py::dict settings_dict(const Settings& settings) {
  py::dict out;
  for (const auto& [name, value] : settings) {
    std::visit([&](const auto& v) { out[py::str(name)] = v; }, value);
  }
  return out;
}

py::dict preprocessing_dict(const Preprocessing& p) {
  py::list columns;
  for (const ColumnSpec& c : p.columns) {
    py::dict column;
    column["name"] = c.name;
    column["role"] = std::string(role_name(c.role));
    column["type"] = std::string(type_name(c.type));
    columns.append(column);
  }
  py::list features;
  for (const FeatureEncoding& f : p.features) {
    py::dict feature;
    feature["name"] = f.name;
    feature["type"] = std::string(type_name(f.type));
    feature["offset"] = f.offset;
    feature["width"] = f.width;
    feature["mean"] = f.mean;
    feature["scale"] = f.scale;
    feature["constant"] = f.constant;
    feature["impute_value"] = f.impute_value;
    feature["categories"] = f.categories;
    features.append(feature);
  }
  py::dict out;
  out["target"] = p.target;
  out["class_names"] = p.class_names;
  out["classes_numeric"] = p.classes_numeric;
  out["impute"] = std::string(impute_name(p.impute));
  out["unseen"] = std::string(unseen_name(p.unseen));
  out["input_width"] = p.input_width;
  out["columns"] = columns;
  out["features"] = features;
  return out;
}

py::dict summary_dict(const RunSummary& s) {
  py::list chain_status;
  for (ChainStatus c : s.chain_status) chain_status.append(std::string(chain_status_name(c)));
  py::dict out;
  out["status"] = std::string(run_status_name(s.status));
  out["recovered"] = s.recovered;
  out["samples"] = s.samples;
  out["kept_per_chain"] = s.kept_per_chain;
  out["chain_status"] = chain_status;
  out["chain_reason"] = s.chain_reason;
  out["steps_per_chain"] = s.steps_per_chain;
  out["seconds_per_chain"] = s.seconds_per_chain;
  out["gradient_evals_per_chain"] = s.gradient_evals_per_chain;
  out["file_bytes"] = s.file_bytes;
  return out;
}

py::dict header_dict(const RunHeader& h) {
  py::dict out;
  out["tool_version"] = h.tool_version;
  out["command_line"] = h.command_line;
  out["created_utc"] = h.created_utc;
  out["mpi_ranks"] = h.mpi_ranks;
  out["mpi_hosts"] = h.mpi_hosts;
  out["data_file"] = h.data_file;
  out["data_sha256"] = h.data_sha256;
  out["data_rows"] = h.data_rows;
  out["train_rows"] = to_numpy(h.train_rows);
  out["val_rows"] = to_numpy(h.val_rows);
  out["test_rows"] = to_numpy(h.test_rows);
  out["net_text"] = h.net_text;
  out["parameters"] = h.parameters;
  out["chains"] = h.chains;
  out["samples_per_chain"] = h.samples_per_chain;
  out["probe_rows"] = to_numpy(h.probe_rows);
  out["probe_labels"] = to_numpy(h.probe_labels);
  out["projections"] = h.projections;
  out["layers"] = h.layers;
  return out;
}

// Everything of one run file; the samples are (S, P): one kept sample per row, the
// same memory as the file's (P, S) column-major matrix.
py::dict open_run(const std::string& path) {
  std::unique_ptr<RunReader> run;
  Eigen::MatrixXf samples;
  std::vector<std::int32_t> chains;
  std::vector<std::int64_t> steps, indices;
  std::optional<StoredTemperature> temperature;
  {
    py::gil_scoped_release release;
    run = take(RunReader::open(path));
    samples = take(run->samples());
    chains = take(run->sample_chains());
    steps = take(run->sample_steps());
    indices = take(run->sample_indices());
    temperature = take(run->stored_temperature());
  }
  py::array_t<float> theta({static_cast<py::ssize_t>(samples.cols()),
                            static_cast<py::ssize_t>(samples.rows())});
  std::copy(samples.data(), samples.data() + samples.size(), theta.mutable_data());
  py::dict out;
  out["path"] = path;
  out["header"] = header_dict(run->header());
  out["settings"] = settings_dict(run->header().settings);
  out["preprocessing"] = preprocessing_dict(run->header().preprocessing);
  out["summary"] = summary_dict(run->summary());
  out["samples"] = theta;
  out["sample_chains"] = to_numpy(chains);
  out["sample_steps"] = to_numpy(steps);
  out["sample_indices"] = to_numpy(indices);
  if (temperature) {
    py::dict t;
    t["temperature"] = temperature->temperature;
    t["samples"] = temperature->samples;
    t["fitted_on"] = temperature->fitted_on;
    t["nll_before"] = temperature->nll_before;
    t["nll_after"] = temperature->nll_after;
    t["fitted_utc"] = temperature->fitted_utc;
    out["stored_temperature"] = t;
  } else {
    out["stored_temperature"] = py::none();
  }
  return out;
}

}  // namespace

void bind_run(py::module_& m) {
  m.def("open_run", &open_run, py::arg("path"),
        "Reads a run file: header, settings, preprocessing, summary and kept samples (S, P).");
}

}  // namespace credence::python
