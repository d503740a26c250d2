// Invented demo tables with known true class probabilities.
//
// Each scenario is a made-up setting of our own (no real data set behind it): rows are
// drawn from a fixed generative model, and the label of each row is drawn from a known
// nonlinear class-probability function of its latent features. The true probabilities
// go to a side file, so a trained model's probabilities can be scored against the truth
// and not only against the sampled labels. Everything is deterministic for a seed, on
// every platform (the generator uses only std::mt19937_64 bits and its own transforms).
// All functions are safe to call from several threads.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "credence/status.h"

namespace credence {

/// One scenario's name, target column, id column and one-line description.
struct SynthScenario {
  std::string name;
  std::string target;       // the label column
  std::string id_column;    // a unique row identifier column
  std::string description;
};

/// Every scenario `write_synth_table` knows.
const std::vector<SynthScenario>& synth_scenarios();

struct SynthOptions {
  std::string scenario = "cold-store";  // one of synth_scenarios()
  std::int64_t rows = 2000;             // data rows to draw; 1 to 10,000,000
  std::uint64_t seed = 1;               // same seed, same table
};

/// Draws a table and writes it to `csv_path` (header row, then one row per draw) and
/// the true class probabilities to `truth_path` (the id column, then `p_<class>` per
/// class). Both files are written to a temporary name and renamed, so a failure leaves
/// neither half-written. Returns kInvalidInput for an unknown scenario or a bad row
/// count, kIoError when a file cannot be written.
Status write_synth_table(const SynthOptions& options, const std::string& csv_path,
                         const std::string& truth_path);

}  // namespace credence
