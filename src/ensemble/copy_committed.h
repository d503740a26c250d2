// Copying a run's committed rows into another writer: shared by merge and by resume's
// rebuild of a file whose writer was killed.
#pragma once

#include "credence/ensemble.h"

namespace credence::run_file {

/// Queues every committed sample, trace row and chain state of `run` on `writer`, with
/// chain numbers shifted by `chain_base`, then commits. Chain states take the writer's
/// state template (zeros for names the run lacks); chains never checkpointed stay so.
Status copy_committed(const RunReader& run, RunWriter& writer, int chain_base);

}  // namespace credence::run_file
