// The compiled half of `import credence`: bindings over the library. The pure-Python
// package (python/credence/) wraps these in pandas-friendly calls.
#include <pybind11/pybind11.h>
#include <spdlog/spdlog.h>

#include <string>

#include "bindings.h"
#include "credence/version.h"
#include "status_error.h"
#include "util/log.h"

namespace {

// The library logs through spdlog to stderr; a notebook sees warnings and errors only
// unless it asks for more (the CLI's --quiet is the same default for scripts).
void set_log_level(const std::string& level) {
  spdlog::level::level_enum parsed = spdlog::level::from_str(level);
  if (parsed == spdlog::level::off && level != "off") {
    throw credence::python::StatusError(credence::Status::invalid_input(
        "log level '" + level + "': use trace, debug, info, warning, error or off"));
  }
  credence::log().set_level(parsed);
}

}  // namespace

PYBIND11_MODULE(_credence, m) {
  m.doc() = "credence's library calls; use the `credence` package, not this module";
  m.attr("__version__") = credence::kVersion;
  credence::python::register_status_errors(m);
  credence::python::bind_run(m);
  credence::python::bind_predict(m);
  credence::python::bind_assess(m);
  credence::python::bind_train(m);
  credence::python::bind_compare(m);
  m.def("set_log_level", &set_log_level, pybind11::arg("level"),
        "How much the library logs to stderr: trace, debug, info, warning (default), error, off.");
  set_log_level("warning");
}
