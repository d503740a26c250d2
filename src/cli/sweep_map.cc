// `credence sweep --masses ... --max-moves ...`: the map's flags; the work is
// run_tuning_map_job (sweep.h).
#include "cli/sweep_map.h"

#include <cstdio>

#include "credence/sweep.h"

namespace credence::cli {

void add_tuning_map_flags(CLI::App& command, TuningMapFlags& flags) {
  flags.masses_option = command.add_option(
      "--masses", flags.masses,
      "Map rsghmc or rhmc: rest masses m (fixed, not adapted), a list 0.1,1,10 or a log range "
      "FROM:TO:COUNT; mapped against --max-moves (or --step-sizes)");
  flags.max_moves_option = command.add_option(
      "--max-moves", flags.max_moves,
      "Map rsghmc or rhmc: per-step move bounds (set the speed of light c = max move / step; "
      "for rhmc, the bound at its starting step), a list or a log range FROM:TO:COUNT");
  flags.methods_option = command.get_option("--methods");
  flags.step_sizes_option = command.get_option("--step-sizes");
  flags.batch_option = command.get_option("--batch");
}

bool tuning_map_requested(const TuningMapFlags& flags) {
  return (flags.masses_option != nullptr && flags.masses_option->count() > 0) ||
         (flags.max_moves_option != nullptr && flags.max_moves_option->count() > 0);
}

Status run_tuning_map(const TuningMapFlags& flags, const CompareFlags& compare_flags,
                      const std::string& step_sizes, const GlobalOptions& global) {
  CompareFlags compare = compare_flags;
  if (flags.methods_option == nullptr || flags.methods_option->count() == 0) compare.methods = "rsghmc";
  std::vector<Method> methods;
  Result<CompareRequest> request = compare_request(compare, methods, /*full_batch_allowed=*/true);
  if (!request.ok()) return request.status();
  const bool steps_given = flags.step_sizes_option != nullptr && flags.step_sizes_option->count() > 0;
  TuningMapRequest map;
  map.compare = std::move(*request);
  map.methods = std::move(methods);
  map.batch_given = flags.batch_option != nullptr && flags.batch_option->count() > 0;
  map.masses = flags.masses;
  map.max_moves = flags.max_moves;
  if (steps_given) map.step_sizes = step_sizes;
  set_compare_hooks(map.compare, global);
  const std::string out_dir = map.compare.out_dir;
  Result<SweepSummary> summary = run_tuning_map_job(std::move(map));
  if (!summary.ok()) return summary.status();
  const std::string& text = summary->text;
  std::fputs(text.c_str(), stdout);
  std::fprintf(stdout, "\nreport: %s/report.html\n", out_dir.c_str());
  return Status::ok_status();
}

}  // namespace credence::cli
