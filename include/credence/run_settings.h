// Every setting of a training run, and its conversion to and from the run file's
// named values (so --resume rebuilds exactly the run that was started).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "credence/data.h"
#include "credence/named_arrays.h"
#include "credence/posterior.h"
#include "credence/samplers.h"

namespace credence {

/// What `credence train` runs, beyond the data flags.
struct TrainSettings {
  SamplerSettings sampler;
  ChainSettings chains;
  BatchOptions batches;
  Tempering tempering = Tempering::kWholePosterior;
  /// Optimizers: total steps (burn-in + 1); 0 = derive from epochs.
  std::int64_t steps = 0;
  /// Optimizers: passes over the training rows when steps is 0. Default 50.
  double epochs = 50;
  /// Tracked summaries: probe rows (from the validation split) and projections.
  std::int64_t probe_rows = 256;
  int projections = 4;
  /// Starting points: chain c starts from stream_seed(init_seed, kInit, c) (util/rng.h);
  /// 0 = the run seed.
  std::uint64_t init_seed = 0;
  /// Random projections of the tracked summaries: `credence train` sets the split's
  /// --seed, so runs that differ only in --chain-seed project alike and can be merged.
  std::uint64_t summary_seed = 0;
  double flush_seconds = 2.0;   // longest time a kept sample waits before reaching disk
};

/// Checks the chain layout and batch flags before anything is read or written;
/// kInvalidInput names the flag and what to give instead.
Status validate_train_settings(const TrainSettings& settings);

/// Every field of `settings` plus the data flags needed to read the data again
/// (delimiter, missing-value tokens), as named values for the run file.
Settings to_values(const TrainSettings& settings, const DataOptions& data);

/// The inverse of to_values. kCorrupt names a missing or mistyped setting.
Status from_values(const Settings& values, TrainSettings& settings, ReadOptions& read);

}  // namespace credence
