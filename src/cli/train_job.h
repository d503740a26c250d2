// `credence train` as one function: data, network, chains, writer thread, run file.
#pragma once

#include <string>
#include <vector>

#include "cli/data_options.h"
#include "cli/run_settings.h"
#include "credence/net.h"
#include "credence/status.h"

namespace credence::cli {

/// Everything `credence train` was asked to do.
struct TrainRequest {
  std::string data_path;        // DATA.csv; on --resume, empty = the path stored in the run
  DataOptions data;             // resolved data flags (ignored on --resume)
  std::string net_path;         // --net FILE; empty = from hidden/activation
  std::vector<Index> hidden;    // --hidden 64,64
  std::string activation = "relu";
  double prior_scale = 1.0;     // --prior-scale (global weight scale s)
  TrainSettings settings;
  std::string out_path;         // --out RUN.h5
  bool force = false;           // overwrite an existing run file
  std::string resume_path;      // --resume RUN.h5: continue this run instead
  std::string command_line;     // for provenance
  bool quiet = false;
};

/// Runs the request. kInterrupted after Ctrl-C (the run file is valid and resumable),
/// kDiverged when every chain diverged, kInvalidInput for bad input (nothing written).
Status run_train(const TrainRequest& request);

}  // namespace credence::cli
