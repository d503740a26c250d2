// A long library call (train, compare) on a thread of its own, watched from Python: the
// caller's thread keeps the GIL free, hands progress to a Python callback four times a
// second, and turns Ctrl-C into the library's stop flag, so every run file is committed
// and left resumable before KeyboardInterrupt.
#pragma once

#include <pybind11/pybind11.h>

#include <functional>

#include "credence/train.h"

namespace credence::python {

/// Runs `job` with hooks whose stop flag Ctrl-C sets and whose progress reaches
/// `progress` (may be empty) as a dict: label, total_steps, total_samples, steps_done,
/// kept, loss, finished. Returns job's status, kInterrupted when Ctrl-C stopped it; an
/// exception from `progress` other than KeyboardInterrupt stops the job and is re-raised.
Status run_watched(const std::function<Status(const TrainHooks&)>& job,
                   const std::function<void(pybind11::dict)>& progress);

}  // namespace credence::python
