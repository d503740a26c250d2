// The compiled half of `import credence`: bindings over the library. The pure-Python
// package (python/credence/) wraps these in pandas-friendly calls.
#include <pybind11/pybind11.h>

#include "credence/version.h"
#include "bindings.h"

PYBIND11_MODULE(_credence, m) {
  m.doc() = "credence's library calls; use the `credence` package, not this module";
  m.attr("__version__") = credence::kVersion;
  credence::python::register_status_errors(m);
  credence::python::bind_run(m);
  credence::python::bind_predict(m);
  credence::python::bind_assess(m);
}
