// What the chains hand the single writer of a training run (train_job.cc, and the MPI
// transport when the chains run on other ranks).
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <variant>
#include <vector>

#include "credence/ensemble.h"

namespace credence {

/// A kept sample on its way from a chain to the writer.
struct SampleMessage {
  int chain = 0;
  std::int64_t step = 0;
  std::int64_t index = 0;
  Eigen::VectorXf theta;  // (P)
  std::vector<double> prior_precision;  // (2L) a learned prior's precisions, or empty
};
/// What the chains hand the single writer (in-process through a queue, or from another
/// MPI rank as bytes): trace rows, kept samples and chain states, in step order per chain.
using ChainMessage = std::variant<TraceRecord, SampleMessage, ChainState>;

}  // namespace credence
