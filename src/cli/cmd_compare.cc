// `credence compare`: optimizers against samplers on one split, one network and one
// gradient budget; a table, CSV, JSON and an HTML report.
#include <fmt/format.h>

#include <cstdio>

#include "cli/commands.h"
#include "cli/compare_extend.h"
#include "cli/compare_flags.h"
#include "report/verdict_output.h"

namespace credence::cli {
namespace {

Status run_compare_command(const CompareFlags& flags, const GlobalOptions& global) {
  std::vector<Method> methods;
  Result<CompareRequest> request = compare_request(flags, methods);
  if (!request.ok()) return request.status();
  for (Method m : methods) {
    const std::string name(method_name(m));
    request->entries.push_back({m, std::nullopt, name, name});
  }
  request->quiet = global.quiet;
  request->command_line = global.command_line;
  Result<std::vector<CompareOutcome>> outcomes = run_compare(*request);
  if (!outcomes.ok()) return outcomes.status();
  const std::vector<MethodRun> runs = trained_runs(*outcomes);

  std::string failures;
  for (const CompareOutcome& o : *outcomes) {
    if (!o.run) failures += fmt::format("{}: no result ({})\n", o.entry.label, o.failure);
  }
  if (runs.empty()) {
    return Status::diverged("no method produced a usable run:\n" + failures);
  }
  const TextTable table = score_table(runs);
  std::string text = fmt::format("compare on {} (test rows: {})\n\n{}", flags.data_path,
                                 runs.front().assessment.rows.size(), render_text(table));
  text += "\n";
  for (const MethodRun& run : runs) {
    if (run.verdict) text += verdict_text(*run.verdict, run.label);
  }
  if (!failures.empty()) text += "\n" + failures;
  for (const CompareOutcome& o : *outcomes) {
    if (!o.budget_note.empty()) text += fmt::format("\nnote, {}: {}\n", o.entry.label, o.budget_note);
  }
  text += fmt::format("\n{}\n", cautions_text());
  CREDENCE_RETURN_IF_ERROR(write_output(request->out_dir, "summary.txt", text));
  CREDENCE_RETURN_IF_ERROR(write_output(request->out_dir, "summary.csv", render_csv(table)));
  CREDENCE_RETURN_IF_ERROR(write_output(request->out_dir, "summary.json", score_json(runs)));
  CREDENCE_RETURN_IF_ERROR(write_output(
      request->out_dir, "report.html",
      report_page(fmt::format("credence compare: {}", flags.data_path), runs, flags.data_path)));
  std::fputs(text.c_str(), stdout);
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
