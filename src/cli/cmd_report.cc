// `credence report`: one run's self-contained HTML report.
#include <fmt/format.h>

#include <cstdio>

#include "cli/assess_flags.h"
#include "cli/commands.h"
#include "report/report_page.h"
#include "report/verdict_output.h"
#include "util/atomic_file.h"

namespace credence::cli {
namespace {

struct ReportFlags {
  std::string run_path;
  std::string data_path;
  std::string out;
  std::string split = "auto";
  std::string truth_path;
  int bootstrap = 1000;
  AssessFlags decisions;  // only the decision flags are read (add_decision_flags)
};

Status run_report(const ReportFlags& flags, const GlobalOptions& global) {
  if (flags.out.empty()) return Status::invalid_input("give --out REPORT.html");
  AssessJobOptions options;
  if (flags.split == "test") {
    options.split = AssessSplit::kTest;
  } else if (flags.split == "all") {
    options.split = AssessSplit::kAll;
  } else if (flags.split != "auto") {
    return Status::invalid_input(
        fmt::format("--split '{}': use test, all or auto", flags.split));
  }
  options.truth_path = flags.truth_path;
  options.metrics.bootstrap.resamples = flags.bootstrap;
  CREDENCE_RETURN_IF_ERROR(threshold_rule(flags.decisions, options.threshold));
  options.positive_class = flags.decisions.positive_class;
  Result<MethodRun> run = load_method_run(flags.run_path, flags.data_path, "", options);
  if (!run.ok()) return run.status();
  // The end-of-run checks, as diagnose judges them (with the probe labels the run keeps).
  run->verdict = judge_run_file(flags.run_path, {});
  // How close the draws are to the posterior (docs/diagnostics.md): skipped with a note
  // for optimizers, too much work or a missing training table.
  SteinSettings stein;
  if (run->assessment.data_matches_run) stein.data_path = flags.data_path;
  Result<RunStein> ksd = run_stein_discrepancy(flags.run_path, stein);
  if (!ksd.ok()) return ksd.status();
  run->stein = std::move(*ksd);
  std::vector<MethodRun> runs;
  runs.push_back(std::move(*run));
  CREDENCE_RETURN_IF_ERROR(write_file_atomically(
      flags.out, report_page(fmt::format("credence report: {}", flags.run_path), runs,
                             flags.data_path)));
  if (!global.quiet) std::fprintf(stderr, "report: %s\n", flags.out.c_str());
  return Status::ok_status();
}

}  // namespace

void add_report_command(CLI::App& app, const GlobalOptions& global, CommandList& commands) {
  auto flags = std::make_shared<ReportFlags>();
  CLI::App* sub = app.add_subcommand(
      "report", "One self-contained HTML page about a run: scores, reliability, doubt, "
                "traces, mixing, settings");
  sub->add_option("RUN.h5", flags->run_path, "The run file")->required();
  sub->add_option("DATA.csv", flags->data_path, "Labelled rows (the run's data file for test)")
      ->required();
  sub->add_option("--out", flags->out, "Where to write the HTML page")->required();
  sub->add_option("--split", flags->split, "test, all or auto (as assess)")->capture_default_str();
  sub->add_option("--truth", flags->truth_path, "A synth truth file");
  sub->add_option("--bootstrap", flags->bootstrap, "Bootstrap resamples")->capture_default_str();
  add_decision_flags(*sub, flags->decisions);
  commands.push_back({sub, [flags, &global] { return run_report(*flags, global); }});
}

}  // namespace credence::cli
