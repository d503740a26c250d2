// `credence compare`: optimizers against samplers on one split, one network and one
// gradient budget; a table, CSV, JSON and an HTML report.
#include <cstdio>

#include "cli/commands.h"
#include "cli/compare_flags.h"
#include "compare/compare_extend.h"

namespace credence::cli {
namespace {

Status run_compare_command(const CompareFlags& flags, const GlobalOptions& global) {
  std::vector<Method> methods;
  Result<CompareRequest> request = compare_request(flags, methods);
  if (!request.ok()) return request.status();
  for (Method m : methods) request->entries.push_back(compare_entry(m));
  set_compare_hooks(*request, global);
  Result<CompareSummary> summary = run_compare_job(*request);
  if (!summary.ok()) return summary.status();
  std::fputs(summary->text.c_str(), stdout);
  std::fprintf(stdout, "\nreport: %s/report.html\n", request->out_dir.c_str());
  return Status::ok_status();
}

}  // namespace

void add_compare_command(CLI::App& app, const GlobalOptions& global, CommandList& commands) {
  auto flags = std::make_shared<CompareFlags>();
  CLI::App* sub = app.add_subcommand(
      "compare",
      "Train several methods on one split, one network and one gradient budget; compare "
      "their accuracy and calibration side by side, with an HTML report");
  flags->extend_seconds = kExtendSeconds;  // sweep keeps 0: it maps step sizes, not one run
  add_compare_flags(*sub, *flags, "adam,rsgd,sgld,sghmc,rsghmc");
  commands.push_back({sub, [flags, &global] { return run_compare_command(*flags, global); }});
}

}  // namespace credence::cli
