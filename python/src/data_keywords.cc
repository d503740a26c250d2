// read_data_keywords: train's and compare's data keywords as DataOptions.
#include "data_keywords.h"

#include <pybind11/stl.h>

#include <cstdint>
#include <string>
#include <vector>

#include "status_error.h"
#include "unseen_option.h"

namespace py = pybind11;

namespace credence::python {
void read_data_keywords(const py::dict& options, DataOptions& data) {
  auto has = [&](const char* key) { return options.contains(key); };
  if (has("target")) data.schema.target = keyword<std::string>(options, "target");
  if (has("categorical")) data.schema.categorical = keyword<std::vector<std::string>>(options, "categorical");
  if (has("drop")) data.schema.drop = keyword<std::vector<std::string>>(options, "drop");
  if (has("id")) data.schema.id = keyword<std::vector<std::string>>(options, "id");
  if (has("impute")) {
    const std::string impute = keyword<std::string>(options, "impute");
    if (impute == "median") {
      data.schema.impute = ImputeMethod::kMedian;
    } else if (impute != "none") {
      throw StatusError(Status::invalid_input("impute='" + impute + "' is not one of: none, median"));
    }
  }
  if (has("unseen")) data.preprocess.unseen = parse_unseen(keyword<std::string>(options, "unseen"));
  if (has("delimiter")) {
    const std::string d = keyword<std::string>(options, "delimiter");
    if (d.size() != 1) throw StatusError(Status::invalid_input("delimiter='" + d + "': give one character"));
    data.read.delimiter = d[0];
  }
  if (has("na_tokens")) data.read.na_tokens = keyword<std::vector<std::string>>(options, "na_tokens");
  if (has("test_fraction")) data.split.test_fraction = keyword<double>(options, "test_fraction");
  if (has("val_fraction")) data.split.val_fraction = keyword<double>(options, "val_fraction");
  if (has("seed")) data.split.seed = keyword<std::uint64_t>(options, "seed");
}

}  // namespace credence::python
