// What each binding file adds to the `_credence` module.
#pragma once

#include <pybind11/pybind11.h>

namespace credence::python {

/// StatusError -> credence.errors.<class> (message unchanged); see status_error.h.
void register_status_errors(pybind11::module_& m);
/// open_run(path) -> dict: metadata, settings, preprocessing, kept samples.
void bind_run(pybind11::module_& m);
/// predict_file(...): predict_csv over files, as `credence predict` does.
void bind_predict(pybind11::module_& m);
/// assess_json(...), diagnose_json(path): the --json documents of assess and diagnose.
void bind_assess(pybind11::module_& m);
/// train(data_path, out_path, options, progress): run_train with the CLI's defaults.
void bind_train(pybind11::module_& m);
/// compare(data_path, out_dir, options, progress): run_compare_job with the CLI's defaults.
void bind_compare(pybind11::module_& m);

}  // namespace credence::python
