// A training run made ready to start or continue: the run file's header, the network,
// the encoded training, held-out and probe rows, and the settings after sizing.
#pragma once

#include <string>

#include "credence/ensemble.h"
#include "credence/net.h"
#include "credence/summaries.h"
#include "credence/table_potential.h"
#include "credence/train.h"

namespace credence {

/// Everything a run needs, whether freshly started or resumed.
struct PreparedRun {
  RunHeader header;
  NetSpec spec;
  ParamLayout layout;
  TrainingRows rows;
  TrainingRows held_out;  // validation rows early stopping scores (empty when it is off)
  ProbeSet probe;
  TrainSettings settings;
};

/// Reads and splits the request's table, builds the network, sizes the budget the
/// request did not give (budget.h, held_out.h) and fills the header of a new run file.
/// Refuses what would not fit in --max-memory before allocating it (DESIGN.md section 7).
Result<PreparedRun> prepare_new_run(const TrainRequest& request);

/// The probe rows' inputs and labels, gathered from the encoded table.
ProbeSet gather_probe(const Eigen::MatrixXf& x, const std::vector<std::int32_t>& labels,
                      const std::vector<std::int64_t>& rows);

/// The potential's settings for a run's method: samplers draw a learned prior's
/// precisions, optimizers maximise the evidence for them (docs/methods.md section 15).
PotentialSettings potential_settings_of(const TrainSettings& settings);

}  // namespace credence
