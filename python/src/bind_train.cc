// train: run_train (credence/train.h) from Python, with the CLI's settings and defaults,
// on a thread of its own watched from Python (worker.h).
#include <pybind11/functional.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <set>

#include "bindings.h"
#include "credence/method_flags.h"
#include "credence/samplers_settings.h"
#include "credence/train.h"
#include "status_error.h"
#include "data_keywords.h"
#include "worker.h"

namespace py = pybind11;

namespace credence::python {
namespace {

// `options` holds only the keywords the caller gave, named as the CLI's flags with
// underscores ("burn_in" for --burn-in); each is marked given, as typed flags are.
TrainRequest request_of(const std::string& data_path, const std::string& out_path,
                        const py::dict& options, std::set<std::string>& given) {
  TrainRequest r;
  r.data_path = data_path;
  r.out_path = out_path;
  TrainSettings& s = r.settings;
  std::string method = "sgld";
  for (const auto& item : options) {
    std::string key = item.first.cast<std::string>();
    std::string flag = "--" + key;
    for (char& c : flag) c = c == '_' ? '-' : c;
    given.insert(flag);
  }
  auto has = [&](const char* key) { return options.contains(key); };
  if (has("method")) method = keyword<std::string>(options, "method");
  s.sampler.method = take(parse_method(method));
  read_data_keywords(options, r.data);
  if (has("hidden")) r.hidden = keyword<std::vector<Index>>(options, "hidden");
  if (has("activation")) r.activation = keyword<std::string>(options, "activation");
  if (has("linear_path")) r.linear_path = keyword<bool>(options, "linear_path");
  if (has("prior_scale")) {
    r.prior_scale_auto = false;
    r.prior_scale = keyword<double>(options, "prior_scale");
  }
  if (has("lr")) s.sampler.learning_rate = keyword<double>(options, "lr");
  if (has("step_size")) s.sampler.step_size = keyword<double>(options, "step_size");
  if (has("temperature")) s.sampler.temperature = keyword<double>(options, "temperature");
  if (has("chains")) s.chains.chains = keyword<int>(options, "chains");
  if (has("samples")) s.chains.samples = keyword<std::int64_t>(options, "samples");
  if (has("burn_in")) s.chains.burn_in = keyword<std::int64_t>(options, "burn_in");
  if (has("thin")) s.chains.thin = keyword<std::int64_t>(options, "thin");
  if (has("steps")) s.steps = keyword<std::int64_t>(options, "steps");
  if (has("epochs")) s.epochs = keyword<double>(options, "epochs");
  if (has("batch")) s.batches.batch_rows = keyword<std::int64_t>(options, "batch");
  if (has("threads")) s.chains.threads = keyword<int>(options, "threads");
  if (has("force")) r.force = keyword<bool>(options, "force");
  if (has("resume")) {
    r.resume_path = out_path;
    r.out_path.clear();
  }
  given.erase("--target");  // data keywords are not method flags
  return r;
}

py::dict train(const std::string& data_path, const std::string& out_path,
               const py::dict& options, const std::function<void(py::dict)>& progress) {
  std::set<std::string> given;
  TrainRequest r = request_of(data_path, out_path, options, given);
  if (!r.resume_path.empty()) {
    raise_if_error(check_resume_flags(given));
  } else {
    raise_if_error(check_method_flags(r.settings.sampler.method,
                                      r.settings.sampler.schedule.kind, false, given));
    apply_method_defaults(r.settings.sampler, given);
    r.budget_given = budget_given_of(given);
    r.settings.chains.seed = r.data.split.seed;
    r.settings.summary_seed = r.data.split.seed;
    if (r.hidden.empty() && !options.contains("hidden")) r.hidden = {32, 32};
    if (r.linear_path && r.hidden.empty()) {
      raise_if_error(Status::invalid_input(
          "linear_path=True needs hidden layers: with hidden=[] the output layer is already "
          "the linear model; drop one of the two"));
    }
    raise_if_error(validate_train_settings(r.settings));
  }
  r.command_line = "credence.train (Python)";
  std::optional<RunVerdict> verdict;
  r.verdict = &verdict;

  raise_if_error(run_watched(
      [&r](const TrainHooks& hooks) {
        r.hooks = hooks;
        return run_train(r);
      },
      progress));
  py::dict out;
  out["run_path"] = r.resume_path.empty() ? r.out_path : r.resume_path;
  out["verdict"] = verdict ? py::object(py::str(verdict->headline)) : py::object(py::none());
  return out;
}

}  // namespace

void bind_train(py::module_& m) {
  m.def("train", &train, py::arg("data_path"), py::arg("out_path"), py::arg("options"),
        py::arg("progress") = std::function<void(py::dict)>{},
        "Trains into out_path as `credence train` does; options are the keywords given.");
}

}  // namespace credence::python
