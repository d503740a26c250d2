// The flags of `credence train`, and the TrainRequest they resolve to.
#pragma once

#include <CLI/CLI.hpp>
#include <cstdint>
#include <set>
#include <string>

#include "cli/data_options.h"
#include "credence/train.h"

namespace credence::cli {

struct TrainFlags {
  TrainRequest request;
  DataFlags data;
  std::string method = "sgld";
  std::string hidden;            // "64,64"
  std::string schedule = "constant";
  std::string tempering = "posterior";
  std::string prior_scale = "auto";  // --prior-scale: auto or a positive number
  std::string linear_path = "off";   // --linear-path on|off
  bool fixed_mass = false;
  // The budget flags, to tell a value given from a default sized to the table.
  CLI::Option* burn_in = nullptr;
  CLI::Option* thin = nullptr;
  CLI::Option* samples = nullptr;
  CLI::Option* steps = nullptr;
  CLI::Option* epochs = nullptr;
  CLI::Option* check_every = nullptr;
  CLI::Option* patience = nullptr;
  CLI::Option* min_steps = nullptr;
  std::uint64_t chain_seed = 0;  // --chain-seed, when given; else the split's --seed
  std::set<std::string> given;   // the long flags typed (method_flags.h)
};

/// --linear-path's value: true for on, false for off; invalid_input otherwise (train and
/// compare read the flag alike).
Result<bool> parse_linear_path(const std::string& text);

/// Fills flags.request from the typed flags: data options, method, schedule, tempering,
/// network, prior scale, which budget flags were given, seeds. Refuses a flag the method
/// does not read (method_flags.h), and any flag but the data file's with --resume.
Status resolve_train_flags(TrainFlags& flags);

}  // namespace credence::cli
