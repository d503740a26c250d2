// `credence synth`: write an invented demo table and its true class probabilities.
#include <fmt/format.h>

#include <cstdio>

#include "cli/commands.h"
#include "credence/synth.h"

namespace credence::cli {
namespace {

struct SynthCommandOptions {
  SynthOptions synth;
  std::string out;    // the CSV to write
  std::string truth;  // the true probabilities; default: OUT with ".truth.csv"
  bool list = false;  // print the scenarios and stop
};

std::string default_truth_path(const std::string& out) {
  std::string stem = out;
  if (stem.size() > 4 && stem.compare(stem.size() - 4, 4, ".csv") == 0) stem.resize(stem.size() - 4);
  return stem + ".truth.csv";
}

Status run_synth(const SynthCommandOptions& options) {
  if (options.list) {
    for (const SynthScenario& s : synth_scenarios()) {
      std::printf("%-12s target %-10s %s\n", s.name.c_str(), s.target.c_str(),
                  s.description.c_str());
    }
    return Status::ok_status();
  }
  if (options.out.empty()) return Status::invalid_input("give --out FILE.csv (or --list)");
  std::string truth = options.truth.empty() ? default_truth_path(options.out) : options.truth;
  CREDENCE_RETURN_IF_ERROR(write_synth_table(options.synth, options.out, truth));
  std::printf("wrote %lld rows of scenario '%s' to %s\ntrue class probabilities: %s\n",
              static_cast<long long>(options.synth.rows), options.synth.scenario.c_str(),
              options.out.c_str(), truth.c_str());
  return Status::ok_status();
}

}  // namespace

void add_synth_command(CLI::App& app, const GlobalOptions&, CommandList& commands) {
  auto options = std::make_shared<SynthCommandOptions>();
  CLI::App* sub = app.add_subcommand(
      "synth", "Write an invented demo table with known true class probabilities");
  sub->add_option("--scenario", options->synth.scenario, "Which invented scenario (see --list)")
      ->capture_default_str();
  sub->add_option("--rows", options->synth.rows, "Rows to draw")->capture_default_str();
  sub->add_option("--seed", options->synth.seed, "Seed; the same seed gives the same table")
      ->capture_default_str();
  sub->add_option("--out", options->out, "CSV file to write");
  sub->add_option("--truth", options->truth,
                  "Where to write each row's true class probabilities (default: OUT.truth.csv)");
  sub->add_flag("--list", options->list, "List the scenarios and exit");
  commands.push_back({sub, [options] { return run_synth(*options); }});
}

}  // namespace credence::cli
