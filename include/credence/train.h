// Training as one library call: data, network, chains, writer thread, run file.
//
// run_train() reads a labelled CSV, prepares it (split, preprocessing), builds the
// network, runs the chains with OpenMP and writes every kept sample into one HDF5 run
// file that survives Ctrl-C and kill -9: after either, a request with resume_path set
// continues every chain from its last committed state, and the samples equal those of
// an uninterrupted run bit for bit (DEVELOPERS.md, "How a training run stays
// consistent"). It never prints: it logs through credence::log(), reports progress and
// is stopped through the hooks below (the CLI passes its terminal progress line and
// its SIGINT handler; a notebook its own widget and interrupt).
//
// Usage:
//   TrainRequest r;
//   r.data_path = "faults.csv";
//   r.data.schema.target = "fault";
//   r.settings.sampler.method = Method::kSghmc;
//   r.budget_given = BudgetGiven{};     // size burn-in, thin, steps from the table
//   r.out_path = "faults.h5";
//   r.hooks.progress = [](const TrainProgress& p) { ... };
//   Status s = run_train(r);            // kInterrupted: resumable, see below
#pragma once

#include <atomic>
#include <cmath>
#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "credence/budget.h"
#include "credence/data.h"
#include "credence/run_settings.h"
#include "credence/net.h"
#include "credence/run_verdict.h"
#include "credence/status.h"

namespace credence {

/// Where a run stands; handed to TrainHooks::progress.
struct TrainProgress {
  std::string label;               // "train sgld", or "train sgld (3 ranks)" under MPI
  std::int64_t total_steps = 0;    // every chain's steps (resumed ones included)
  std::int64_t total_samples = 0;  // every chain's kept samples
  std::int64_t steps_done = 0;     // committed or queued, over every chain
  std::int64_t kept = 0;           // kept samples so far, over every chain
  double loss = std::nan("");      // the latest minibatch U~/N; NaN when unknown
  bool finished = false;           // the run's last call: the chains have ended
};

/// How a caller watches and stops a run. Both may be left empty.
struct TrainHooks {
  /// Read before every step of every chain: when it becomes true each chain ends at
  /// that step boundary, the run file is committed and marked interrupted, and
  /// run_train returns kInterrupted (resume with resume_path). Lock-free, so a signal
  /// handler may set it. Must outlive the call.
  const std::atomic<bool>* stop = nullptr;
  /// Called once as the chains start, about four times a second while they run, and
  /// once with finished = true after they end; never two calls at once. The first and
  /// last come from the calling thread, the others from the run's writer thread (under
  /// MPI only rank 0 reports). It must return quickly and must not throw.
  std::function<void(const TrainProgress&)> progress;
};

/// Everything `credence train` was asked to do.
struct TrainRequest {
  std::string data_path;        // DATA.csv; on --resume, empty = the path stored in the run
  DataOptions data;             // resolved data flags (ignored on --resume)
  std::string net_path;         // --net FILE; empty = from hidden/activation
  std::vector<Index> hidden;    // --hidden 64,64
  std::string activation = "relu";
  bool linear_path = false;     // --linear-path on: docs/prior.md, "The linear path"
  double prior_scale = 1.0;     // --prior-scale s: the fixed weight scale (or the start)
  bool prior_scale_auto = true; // --prior-scale auto: learn it (docs/methods.md section 15)
  TrainSettings settings;
  /// Set (by `credence train`): size the budget flags not given from the table
  /// (budget.h). Empty: use settings' budget as it is.
  std::optional<BudgetGiven> budget_given;
  std::string out_path;         // --out RUN.h5
  bool force = false;           // overwrite an existing run file
  std::string resume_path;      // --resume RUN.h5: continue this run instead
  std::string command_line;     // for provenance
  std::string max_memory;       // --max-memory (empty: 80% of physical memory)
  /// When set, receives the end-of-run verdict (run_verdict.h) of a run that ended
  /// without error (empty when it could not be judged; not set under MPI).
  std::optional<RunVerdict>* verdict = nullptr;
  TrainHooks hooks;
};

/// Runs the request: a new run into out_path, or the run in resume_path continued.
/// Returns kInterrupted after hooks.stop (the run file is valid and resumable),
/// kDiverged when every chain diverged, kInvalidInput for bad input (nothing written).
/// Under mpirun (a build with CREDENCE_MPI) the chains are spread over the ranks:
/// rank r runs chains r, r + R, r + 2R, ... and rank 0 alone writes the run file; the
/// samples equal those of one process running every chain. Every rank calls it.
Status run_train(const TrainRequest& request);

}  // namespace credence
