// The flags of `credence assess`, and the AssessJobOptions they resolve to.
#pragma once

#include <cstdint>
#include <optional>
#include <string>

#include <CLI/CLI.hpp>

#include "credence/assess.h"

namespace credence::cli {

struct AssessFlags {
  std::string run_path;
  std::string data_path;
  std::string split = "auto";
  int bins = 15;
  std::string binning = "width";
  std::string json_path;
  std::string plot_path;
  std::int64_t samples = 0;
  int bootstrap = 1000;
  std::uint64_t seed = 0;
  bool temperature_scale = false;
  bool save_temperature = false;
  std::optional<double> temperature;
  std::optional<std::string> unseen;  // overrides the run's unseen-category policy
  std::string truth_path;
  std::optional<std::string> positive_class;
  std::optional<double> threshold;
  std::optional<double> cost_fp;
  std::optional<double> cost_fn;
  std::optional<double> target_sensitivity;
  std::string max_memory;  // --max-memory; empty: the default share of physical memory
};

/// The options of run_assess_job, from the typed flags; refuses out-of-range or
/// conflicting flags (one threshold rule at most; --save-temperature needs
/// --temperature-scale).
Result<AssessJobOptions> assess_job_options(const AssessFlags& flags);

/// The decision flags (--positive-class, --threshold, --cost-fp, --cost-fn,
/// --target-sensitivity) on `sub`, read into `flags` (assess and report share them).
void add_decision_flags(CLI::App& sub, AssessFlags& flags);

/// How the decision threshold is chosen, from those flags; refuses out-of-range values
/// and more than one rule.
Status threshold_rule(const AssessFlags& flags, ThresholdSettings& threshold);

}  // namespace credence::cli
