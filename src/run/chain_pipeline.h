// The chain-to-run-file pipeline of one process: the chains run with OpenMP, their
// hooks feed the writer thread (writer_thread.h), and the run file's final status
// follows from how every chain ended. The MPI transport (mpi_train.cc) reuses the
// pieces with the chains spread over ranks.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "credence/ensemble.h"
#include "credence/samplers.h"
#include "credence/train.h"
#include "run/prepared_run.h"

namespace credence {

/// How the chains of a run ended, counted.
struct ChainEndCounts {
  int chains = 0;
  int stopped = 0;
  int failed = 0;
  int diverged = 0;
  Status failure;  // the first failed chain's status
};

/// What a run's end means for the run file (its status) and for the caller.
struct RunEnd {
  RunStatus status = RunStatus::kComplete;
  Status result;
};

/// Stopped chains make the run interrupted (resumable with `continue_with`), a failed
/// chain failed, every chain diverged diverged (with a smaller step to try); otherwise
/// complete, whatever a few diverged chains did.
RunEnd end_of_run(const ChainEndCounts& ends, const TrainSettings& settings,
                  const std::string& run_path, const std::string& continue_with);

/// The first progress report of a run: `label`, the totals over every chain, and what
/// a resumed run has already done (`next_steps`, `kept`: next_steps_of in resume.h).
TrainProgress progress_start(std::string label, const TrainSettings& settings,
                             const std::vector<std::int64_t>& next_steps, std::int64_t kept);

/// Runs every chain of `p` in this process into `writer`, continuing the chains in
/// `resume` (empty for a new run), and marks the run file with how they ended.
Status run_chains_into(PreparedRun& p, RunWriter& writer, const std::string& run_path,
                       std::vector<ChainCheckpoint> resume, const TrainHooks& hooks);

}  // namespace credence
