// Resume: a run rebuilt from its run file's header and the data it names, and the
// conversions between the run file's chain states and the chain driver's checkpoints.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "credence/ensemble.h"
#include "credence/samplers.h"
#include "run/prepared_run.h"

namespace credence {

/// Rebuilds the prepared run from a run file's header and the data file it names
/// (`data_override` when not empty); kInvalidInput when the data's SHA-256 differs
/// from the stored one, kCorrupt when the stored settings do not validate.
Result<PreparedRun> prepare_resumed_run(const RunHeader& header, const std::string& data_override);

/// A stored chain state as the driver's checkpoint, and back. Lossless both ways:
/// resuming from it continues the chain bit for bit.
ChainCheckpoint checkpoint_of(const ChainState& state);
ChainState state_of(const ChainCheckpoint& checkpoint);

/// Each chain's first step still to run (0 for a chain not in `resume`), and the
/// samples kept so far in `kept`.
std::vector<std::int64_t> next_steps_of(const std::vector<ChainCheckpoint>& resume, int chains,
                                        std::int64_t& kept);

}  // namespace credence
