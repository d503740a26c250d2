// `credence train` as one function: data, network, chains, writer thread, run file.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include "cli/budget.h"
#include "cli/data_options.h"
#include "cli/run_settings.h"
#include "credence/ensemble.h"
#include "credence/net.h"
#include "credence/run_verdict.h"
#include "credence/status.h"

namespace credence::cli {

/// Everything `credence train` was asked to do.
struct TrainRequest {
  std::string data_path;        // DATA.csv; on --resume, empty = the path stored in the run
  DataOptions data;             // resolved data flags (ignored on --resume)
  std::string net_path;         // --net FILE; empty = from hidden/activation
  std::vector<Index> hidden;    // --hidden 64,64
  std::string activation = "relu";
  double prior_scale = 1.0;     // --prior-scale s: the fixed weight scale (or the start)
  bool prior_scale_auto = true; // --prior-scale auto: learn it (METHODS.md section 15)
  TrainSettings settings;
  /// Set (by `credence train`): size the budget flags not given from the table
  /// (budget.h). Empty: use settings' budget as it is.
  std::optional<BudgetGiven> budget_given;
  std::string out_path;         // --out RUN.h5
  bool force = false;           // overwrite an existing run file
  std::string resume_path;      // --resume RUN.h5: continue this run instead
  std::string command_line;     // for provenance
  bool quiet = false;
  std::string max_memory;       // --max-memory (empty: 80% of physical memory)
  /// When set (compare), receives the end-of-run verdict instead of it being printed.
  std::optional<RunVerdict>* verdict = nullptr;
};

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

/// Runs the request. Under mpirun (a build with CREDENCE_MPI) the chains are spread
/// over the ranks: rank r runs chains r, r + R, r + 2R, ... and rank 0 alone writes
/// the run file; the samples equal those of one process running every chain. kInterrupted after Ctrl-C (the run file is valid and resumable),
/// kDiverged when every chain diverged, kInvalidInput for bad input (nothing written).
Status run_train(const TrainRequest& request);

}  // namespace credence::cli
