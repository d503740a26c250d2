// What rank 0 of an MPI training run settles before any rank trains: it opens the run,
// every rank checks it reads the same data, and rank 0 sends every rank the job.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "credence/ensemble.h"
#include "credence/train.h"
#include "run/mpi_wire.h"
#include "run/mpi_world.h"
#include "run/prepared_run.h"

namespace credence {

/// What rank 0 has opened: for a resumed run the writer, the prepared run and every
/// chain's state; for a new run only the data's path and digest.
struct RootOpening {
  std::unique_ptr<RunWriter> writer;
  PreparedRun prepared;
  std::vector<ChainState> states;
  std::string data_path;
  std::string digest;  // SHA-256 of the data file, hex
};

/// Rank 0 opens the run: for --resume the file and the data it names, for a new run only
/// the data's path and digest (nothing is written before every rank agrees on the data).
Status open_on_root(const TrainRequest& request, RootOpening& opened);

/// Every rank but 0 hashes its own copy of the data and compares with rank 0's digest;
/// kInvalidInput when they differ.
Status check_same_data(const mpi::World& world, const TrainRequest& request,
                       const std::string& root_path, const std::string& root_digest);

/// The job every rank runs: settings, network and encoded training rows from rank 0, so
/// every rank trains on exactly what rank 0 prepared, plus every chain's resume state.
void put_job(wire::Packer& out, const PreparedRun& p, const std::vector<ChainState>& states);
/// kInternal when the bytes are garbled.
Status get_job(wire::Unpacker& in, PreparedRun& p, std::vector<ChainState>& states);

}  // namespace credence
