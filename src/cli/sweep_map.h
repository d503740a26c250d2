// `credence sweep --masses ... --max-moves ...`: the relativistic samplers' tuning map
// (tuning_map.h) trained through the compare job, written as CSV, JSON, heat maps and a
// report.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli/commands.h"
#include "cli/compare_flags.h"

namespace credence::cli {

struct TuningMapFlags {
  std::string masses;     // --masses: empty = no map (sweep over learning rates)
  std::string max_moves;  // --max-moves
  const CLI::Option* masses_option = nullptr;
  const CLI::Option* max_moves_option = nullptr;
  const CLI::Option* methods_option = nullptr;     // was --methods given? (else rsghmc)
  const CLI::Option* step_sizes_option = nullptr;  // was --step-sizes given?
  const CLI::Option* batch_option = nullptr;       // was --batch given? (rhmc reads none)
};

/// Adds --masses and --max-moves to `sweep`. REQUIRES: --methods, --step-sizes and --batch
/// were added to `command` before.
void add_tuning_map_flags(CLI::App& command, TuningMapFlags& flags);

/// True when the command line asks for a map (--masses or --max-moves given).
bool tuning_map_requested(const TuningMapFlags& flags);

/// Trains every cell of the map and writes tuning_map.csv, tuning_map.json, one heat map
/// per measure and method (<method>_<measure>.svg), sweep.txt and report.html in the
/// output folder. Bad grids and methods are refused before anything is trained or written.
Status run_tuning_map(const TuningMapFlags& flags, const CompareFlags& compare,
                      const std::string& step_sizes, const GlobalOptions& global);

}  // namespace credence::cli
