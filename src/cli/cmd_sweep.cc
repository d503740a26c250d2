// `credence sweep`: every method at every learning rate; how robust is each to its step?
#include <cstdio>

#include "cli/commands.h"
#include "cli/compare_flags.h"
#include "cli/sweep_map.h"
#include "credence/sweep.h"

namespace credence::cli {
namespace {

struct SweepFlags {
  CompareFlags compare;
  std::string step_sizes = "1e-3:1:7";
  TuningMapFlags map;  // --masses x --max-moves: rsghmc's and rhmc's tuning map (sweep_map.h)
};

Status run_sweep(const SweepFlags& flags, const GlobalOptions& global) {
  if (tuning_map_requested(flags.map)) {
    return run_tuning_map(flags.map, flags.compare, flags.step_sizes, global);
  }
  SweepRequest request;
  Result<std::vector<double>> rates = parse_step_sizes(flags.step_sizes);
  if (!rates.ok()) return rates.status();
  request.learning_rates = std::move(*rates);
  Result<CompareRequest> compare = compare_request(flags.compare, request.methods);
  if (!compare.ok()) return compare.status();
  request.compare = std::move(*compare);
  set_compare_hooks(request.compare, global);
  const std::string out_dir = request.compare.out_dir;
  Result<SweepSummary> summary = run_sweep_job(std::move(request));
  if (!summary.ok()) return summary.status();
  std::fputs(summary->text.c_str(), stdout);
  std::fprintf(stdout, "\nreport: %s/report.html\n", out_dir.c_str());
  return Status::ok_status();
}

}  // namespace

void add_sweep_command(CLI::App& app, const GlobalOptions& global, CommandList& commands) {
  auto flags = std::make_shared<SweepFlags>();
  CLI::App* sub = app.add_subcommand(
      "sweep",
      "Every method at every learning rate on one split and budget: accuracy, NLL, ECE and "
      "divergences against the step size, with plots");
  add_compare_flags(*sub, flags->compare, "sgld,sghmc");  // rsghmc is mapped, not swept
  sub->add_option("--step-sizes", flags->step_sizes,
                  "Learning rates (mean-loss units, as train's --lr): a list 0.001,0.01 or a "
                  "log range FROM:TO:COUNT")
      ->capture_default_str();
  add_tuning_map_flags(*sub, flags->map);
  commands.push_back({sub, [flags, &global] { return run_sweep(*flags, global); }});
}

}  // namespace credence::cli
