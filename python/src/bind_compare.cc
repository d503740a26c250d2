// compare: run_compare_job (credence/compare.h) from Python, with the CLI's defaults,
// refusals and summary files, on a thread of its own watched from Python (worker.h).
#include <pybind11/functional.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <set>
#include <string>
#include <vector>

#include "bindings.h"
#include "compare/compare_extend.h"
#include "credence/compare.h"
#include "data_keywords.h"
#include "status_error.h"
#include "worker.h"

namespace py = pybind11;

namespace credence::python {
namespace {

// "32,32" from [32, 32]; "none" from []: the text compare's --hidden reads.
std::string widths_text(const std::vector<long long>& widths) {
  if (widths.empty()) return "none";
  std::string text;
  for (long long w : widths) text += (text.empty() ? "" : ",") + std::to_string(w);
  return text;
}

// `options` holds only the keywords the caller gave, named as compare's flags with
// underscores; the others keep the flags' defaults.
py::dict compare(const std::string& data_path, const std::string& out_dir,
                 const py::dict& options, const std::function<void(py::dict)>& progress) {
  auto has = [&](const char* key) { return options.contains(key); };
  CompareRequest r;
  r.data_path = data_path;
  r.out_dir = out_dir;
  read_data_keywords(options, r.data);
  CompareLists lists{.methods = "adam,rsgd,sgld,sghmc,rsghmc"};
  if (has("methods")) lists.methods = keyword<std::string>(options, "methods");
  if (has("hidden")) lists.hidden = widths_text(keyword<std::vector<long long>>(options, "hidden"));
  if (has("activation")) r.activation = keyword<std::string>(options, "activation");
  if (has("linear_path")) r.linear_path = keyword<bool>(options, "linear_path");
  if (has("epochs")) r.epochs = keyword<double>(options, "epochs");
  if (has("chains")) r.chains = keyword<int>(options, "chains");
  if (has("batch")) r.batch_rows = keyword<std::int64_t>(options, "batch");
  r.samples_given = has("samples");
  if (r.samples_given) r.samples = keyword<std::int64_t>(options, "samples");
  if (has("bootstrap")) r.bootstrap = keyword<int>(options, "bootstrap");
  r.extend_seconds = kExtendSeconds;
  lists.extend_given = has("extend_seconds");
  if (lists.extend_given) r.extend_seconds = keyword<double>(options, "extend_seconds");
  if (has("chain_seed")) r.chain_seed = keyword<std::uint64_t>(options, "chain_seed");
  if (has("truth")) r.truth_path = keyword<std::string>(options, "truth");
  const std::vector<Method> methods = take(complete_compare_request(r, lists));
  for (Method m : methods) r.entries.push_back(compare_entry(m));
  r.command_line = "credence.compare (Python)";

  CompareSummary summary;
  raise_if_error(run_watched(
      [&](const TrainHooks& hooks) {
        r.hooks = hooks;
        Result<CompareSummary> done = run_compare_job(r);
        if (!done.ok()) return done.status();
        summary = std::move(*done);
        return Status::ok_status();
      },
      progress));
  py::dict out;
  out["text"] = summary.text;
  out["csv"] = summary.csv;
  out["json"] = summary.json;
  return out;
}

}  // namespace

void bind_compare(py::module_& m) {
  m.def("compare", &compare, py::arg("data_path"), py::arg("out_dir"), py::arg("options"),
        py::arg("progress") = std::function<void(py::dict)>{},
        "Compares methods into out_dir as `credence compare` does; options are the keywords "
        "given. Returns the texts of summary.txt, summary.csv and summary.json.");
}

}  // namespace credence::python
