// The keywords of train and compare (the CLI's flags with underscores): reading one,
// and the data keywords they share.
#pragma once

#include <pybind11/pybind11.h>

#include "credence/data.h"

namespace credence::python {

/// The value of keyword `key` in `options`, as a T (pybind11's conversion rules).
template <typename T>
T keyword(const pybind11::dict& options, const char* key) {
  return options[key].cast<T>();
}

/// Sets `data` from the keywords `options` holds: target, categorical, drop, id, impute,
/// unseen, delimiter, na_tokens, test_fraction, val_fraction, seed. Refuses bad values
/// with the CLI's rules (StatusError).
void read_data_keywords(const pybind11::dict& options, DataOptions& data);

}  // namespace credence::python
