// How a prepared run's chains are built and heard: the potential each chain minimises,
// its starting point, its layout with early stopping attached, and hooks that turn what
// the driver reports into messages for the writer. The potential and the start depend
// on (seed, global chain index) only, so a chain gives the same samples in whichever
// thread or MPI rank runs it.
#pragma once

#include <functional>

#include "credence/samplers.h"
#include "run/chain_message.h"
#include "run/prepared_run.h"

namespace credence {

/// Chain c's potential over the run's training rows, its minibatch order drawn from
/// (seed, c). Reads `p` when called: `p` must outlive the factory.
PotentialFactory factory_of(const PreparedRun& p);

/// Chain c's start, drawn from (init_seed, c). `p` must outlive it.
InitFn init_of(const PreparedRun& p);

/// The chain layout with early stopping's scorer attached (it reads p.held_out).
ChainSettings chain_settings_of(const PreparedRun& p);

/// Hooks that hand every trace row, kept sample and checkpoint to `push` (called under
/// run_chains' hook mutex, so `push` needs no lock of its own against the chains).
ChainHooks hooks_into(const std::function<void(ChainMessage)>& push);

}  // namespace credence
