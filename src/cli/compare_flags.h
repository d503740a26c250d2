// Flags shared by `compare` and `sweep`, and their conversion to a CompareRequest.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "cli/commands.h"
#include "cli/data_options.h"
#include "credence/compare.h"

namespace credence::cli {

struct CompareFlags {
  std::string data_path;
  DataFlags data;
  std::string methods;
  std::string hidden = "32,32";
  std::string activation = "relu";
  std::string net_path;
  std::string linear_path = "off";  // --linear-path on|off
  double epochs = 0;  // 0: sized to the table (compare_budget)
  int chains = 4;
  std::int64_t batch = 128;
  std::int64_t samples = 100;
  std::string out_dir;
  std::string truth_path;
  int bootstrap = 1000;
  std::uint64_t chain_seed = 0;  // --chain-seed, when given; else the split's --seed
  double extend_seconds = 0;     // --extend-seconds; compare sets its default before adding flags
  const CLI::Option* extend_option = nullptr;
  const CLI::Option* samples_option = nullptr;  // set by add_compare_flags: was --samples given?
  const CLI::Option* chain_seed_option = nullptr;  // was --chain-seed given?
};

/// Adds DATA.csv, the data flags, --methods (default `default_methods`), the network and
/// budget flags, --out DIR, --truth and --bootstrap.
void add_compare_flags(CLI::App& command, CompareFlags& flags, const std::string& default_methods);

/// The request without entries (the caller adds them), and the method list parsed;
/// `full_batch_allowed`: accept hmc and rhmc (the tuning map only, CompareLists).
Result<CompareRequest> compare_request(const CompareFlags& flags, std::vector<Method>& methods,
                                       bool full_batch_allowed = false);

/// Ctrl-C, the progress line, the budget line on stderr (unless --quiet) and the
/// command line for the run files.
void set_compare_hooks(CompareRequest& request, const GlobalOptions& global);

}  // namespace credence::cli
