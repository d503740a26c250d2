// train: run_train (credence/train.h) from Python, with the CLI's settings and defaults.
// The call runs on a thread of its own; the caller's thread keeps the GIL free, hands
// progress to a Python callback four times a second, and turns Ctrl-C into the library's
// stop flag, so the run file is committed and left resumable before KeyboardInterrupt.
#include <pybind11/functional.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <atomic>
#include <chrono>
#include <condition_variable>
#include <mutex>
#include <set>
#include <thread>

#include "bindings.h"
#include "cli/method_flags.h"
#include "credence/samplers_settings.h"
#include "credence/train.h"
#include "status_error.h"
#include "unseen_option.h"

namespace py = pybind11;

namespace credence::python {
namespace {

// The newest progress, handed from the run's writer thread to the caller's thread.
struct ProgressBox {
  std::mutex mutex;
  std::condition_variable changed;
  std::optional<TrainProgress> latest;
  bool done = false;
};

template <typename T>
T get(const py::dict& options, const char* key) {
  return options[key].cast<T>();
}

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
  if (has("method")) method = get<std::string>(options, "method");
  s.sampler.method = take(parse_method(method));
  if (has("target")) r.data.schema.target = get<std::string>(options, "target");
  if (has("categorical")) r.data.schema.categorical = get<std::vector<std::string>>(options, "categorical");
  if (has("drop")) r.data.schema.drop = get<std::vector<std::string>>(options, "drop");
  if (has("id")) r.data.schema.id = get<std::vector<std::string>>(options, "id");
  if (has("impute")) {
    const std::string impute = get<std::string>(options, "impute");
    if (impute == "median") {
      r.data.schema.impute = ImputeMethod::kMedian;
    } else if (impute != "none") {
      throw StatusError(Status::invalid_input("impute='" + impute + "' is not one of: none, median"));
    }
  }
  if (has("unseen")) r.data.preprocess.unseen = parse_unseen(get<std::string>(options, "unseen"));
  if (has("delimiter")) {
    const std::string d = get<std::string>(options, "delimiter");
    if (d.size() != 1) throw StatusError(Status::invalid_input("delimiter='" + d + "': give one character"));
    r.data.read.delimiter = d[0];
  }
  if (has("na_tokens")) r.data.read.na_tokens = get<std::vector<std::string>>(options, "na_tokens");
  if (has("test_fraction")) r.data.split.test_fraction = get<double>(options, "test_fraction");
  if (has("val_fraction")) r.data.split.val_fraction = get<double>(options, "val_fraction");
  if (has("seed")) r.data.split.seed = get<std::uint64_t>(options, "seed");
  if (has("hidden")) r.hidden = get<std::vector<Index>>(options, "hidden");
  if (has("activation")) r.activation = get<std::string>(options, "activation");
  if (has("prior_scale")) {
    r.prior_scale_auto = false;
    r.prior_scale = get<double>(options, "prior_scale");
  }
  s.sampler.learning_rate = has("lr") ? get<double>(options, "lr") : default_learning_rate(s.sampler.method);
  if (has("step_size")) s.sampler.step_size = get<double>(options, "step_size");
  if (has("temperature")) s.sampler.temperature = get<double>(options, "temperature");
  if (has("chains")) s.chains.chains = get<int>(options, "chains");
  if (has("samples")) s.chains.samples = get<std::int64_t>(options, "samples");
  if (has("burn_in")) s.chains.burn_in = get<std::int64_t>(options, "burn_in");
  if (has("thin")) s.chains.thin = get<std::int64_t>(options, "thin");
  if (has("steps")) s.steps = get<std::int64_t>(options, "steps");
  if (has("epochs")) s.epochs = get<double>(options, "epochs");
  if (has("batch")) s.batches.batch_rows = get<std::int64_t>(options, "batch");
  if (has("threads")) s.chains.threads = get<int>(options, "threads");
  if (has("force")) r.force = get<bool>(options, "force");
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
    raise_if_error(cli::check_resume_flags(given));
  } else {
    raise_if_error(cli::check_method_flags(r.settings.sampler.method,
                                           r.settings.sampler.schedule.kind, false, given));
    r.budget_given = BudgetGiven{.burn_in = options.contains("burn_in"),
                                 .thin = options.contains("thin"),
                                 .samples = options.contains("samples"),
                                 .steps = options.contains("steps"),
                                 .epochs = options.contains("epochs")};
    r.settings.chains.seed = r.data.split.seed;
    r.settings.summary_seed = r.data.split.seed;
    if (r.hidden.empty() && !options.contains("hidden")) r.hidden = {32, 32};
    raise_if_error(validate_train_settings(r.settings));
  }
  r.command_line = "credence.train (Python)";
  std::optional<RunVerdict> verdict;
  r.verdict = &verdict;

  std::atomic<bool> stop{false};
  ProgressBox box;
  r.hooks.stop = &stop;
  r.hooks.progress = [&box](const TrainProgress& p) {
    std::lock_guard<std::mutex> lock(box.mutex);
    box.latest = p;
  };
  Status result;
  std::thread worker([&] {
    result = run_train(r);
    std::lock_guard<std::mutex> lock(box.mutex);
    box.done = true;
    box.changed.notify_all();
  });
  bool interrupted = false;
  for (bool done = false; !done;) {
    std::optional<TrainProgress> latest;
    {
      py::gil_scoped_release release;
      std::unique_lock<std::mutex> lock(box.mutex);
      box.changed.wait_for(lock, std::chrono::milliseconds(250), [&] { return box.done; });
      done = box.done;
      latest.swap(box.latest);
    }
    if (PyErr_CheckSignals() != 0) {  // Ctrl-C: stop at the next step, commit, return
      PyErr_Clear();
      stop.store(true);
      interrupted = true;
    }
    if (latest && progress) {
      py::dict p;
      p["label"] = latest->label;
      p["total_steps"] = latest->total_steps;
      p["total_samples"] = latest->total_samples;
      p["steps_done"] = latest->steps_done;
      p["kept"] = latest->kept;
      p["loss"] = latest->loss;
      p["finished"] = latest->finished;
      try {
        progress(p);
      } catch (py::error_already_set& e) {
        stop.store(true);
        // Ctrl-C while the display ran: the same clean stop as above.
        if (e.matches(PyExc_KeyboardInterrupt)) {
          interrupted = true;
          continue;
        }
        // A failing display: the run is stopped and committed, then its error raised.
        {
          py::gil_scoped_release release;
          worker.join();
        }
        throw;
      }
    }
  }
  worker.join();
  if (interrupted && result.ok()) result = Status::interrupted("interrupted");
  raise_if_error(result);
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
