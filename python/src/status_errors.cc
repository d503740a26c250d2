// register_status_errors: each StatusCode raises its own class from credence.errors.
#include <pybind11/pybind11.h>

#include <exception>

#include "bindings.h"
#include "status_error.h"

namespace py = pybind11;

namespace credence::python {
namespace {

// Class names in python/credence/errors.py; bad input and damaged files are ValueErrors.
const char* class_name(StatusCode code) {
  switch (code) {
    case StatusCode::kInvalidInput: return "InvalidInputError";
    case StatusCode::kCorrupt: return "CorruptRunError";
    case StatusCode::kIoError: return "RunIOError";
    case StatusCode::kDiverged: return "DivergedError";
    case StatusCode::kInterrupted: return "TrainingInterrupted";
    default: return "CredenceError";
  }
}

}  // namespace

void register_status_errors(py::module_& /*m*/) {
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const StatusError& e) {
      py::object errors = py::module_::import("credence.errors");
      py::object cls = errors.attr(class_name(e.code()));
      PyErr_SetObject(cls.ptr(), py::str(e.what()).ptr());
    }
  });
}

}  // namespace credence::python
