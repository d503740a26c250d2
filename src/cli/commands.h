// How a command plugs into the `credence` executable.
//
// Each src/cli/cmd_<name>.cc defines add_<name>_command(), which adds a CLI11
// subcommand, binds its options to a settings struct it owns, and records the
// function to run once parsing succeeded. main.cc runs the one that was chosen.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>
#include <vector>

#include "credence/status.h"

namespace credence::cli {

/// Options every command shares.
struct GlobalOptions {
  bool quiet = false;               // warnings and errors only, no progress
  std::string log_level = "info";   // trace, debug, info, warn, error, off
  std::string command_line;         // argv joined by spaces, recorded as provenance
};

struct Command {
  CLI::App* app = nullptr;          // the subcommand, owned by the parent App
  std::function<Status()> run;      // called after a successful parse
};

using CommandList = std::vector<Command>;

void add_schema_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_synth_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_train_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_inspect_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_merge_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_predict_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_assess_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_diagnose_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_compare_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_sweep_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);
void add_report_command(CLI::App& app, const GlobalOptions& global, CommandList& commands);

}  // namespace credence::cli
