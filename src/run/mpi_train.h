// The MPI transport of a training run (a build with CREDENCE_MPI, under mpirun).
#pragma once

#include "credence/train.h"

namespace credence {

/// run_train under mpirun: every rank calls it; the chains are spread over the ranks
/// and rank 0 alone writes the run file (train.h).
Status run_train_under_mpi(const TrainRequest& request);

}  // namespace credence
