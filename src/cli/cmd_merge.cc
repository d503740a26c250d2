// `credence merge`: join runs of the same model (chains from several machines).
#include <cstdio>

#include "cli/commands.h"
#include "credence/ensemble.h"

namespace credence::cli {
namespace {

struct MergeOptions {
  std::vector<std::string> inputs;
  std::string out;
  bool force = false;
};

Status run_merge(const MergeOptions& options) {
  if (options.inputs.size() < 2) {
    return Status::invalid_input("give at least two run files to merge, then --out FILE.h5");
  }
  if (options.out.empty()) return Status::invalid_input("give --out FILE.h5 for the merged run");
  CREDENCE_RETURN_IF_ERROR(merge_runs(options.inputs, options.out, options.force));
  std::printf("merged %zu runs into %s\n", options.inputs.size(), options.out.c_str());
  return Status::ok_status();
}

}  // namespace

void add_merge_command(CLI::App& app, const GlobalOptions&, CommandList& commands) {
  auto options = std::make_shared<MergeOptions>();
  CLI::App* sub = app.add_subcommand(
      "merge", "Join runs of the same net, preprocessing and method into one ensemble (chains renumbered)");
  sub->add_option("RUNS", options->inputs, "Run files to join")->required();
  sub->add_option("--out", options->out, "The merged run file");
  sub->add_flag("--force", options->force, "Overwrite an existing output file");
  commands.push_back({sub, [options] { return run_merge(*options); }});
}

}  // namespace credence::cli
