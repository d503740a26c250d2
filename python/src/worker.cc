// run_watched: a library call on its own thread, its progress and Ctrl-C handled from
// the Python thread that waits for it.
#include "worker.h"

#include <atomic>
#include <chrono>
#include <condition_variable>
#include <mutex>
#include <optional>
#include <thread>

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

}  // namespace

Status run_watched(const std::function<Status(const TrainHooks&)>& job,
                   const std::function<void(py::dict)>& progress) {
  std::atomic<bool> stop{false};
  ProgressBox box;
  TrainHooks hooks;
  hooks.stop = &stop;
  hooks.progress = [&box](const TrainProgress& p) {
    std::lock_guard<std::mutex> lock(box.mutex);
    box.latest = p;
  };
  Status result;
  std::thread worker([&] {
    result = job(hooks);
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
  return result;
}

}  // namespace credence::python
