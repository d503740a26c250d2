// run_compare_job: a comparison and its summary files (summary.txt, .csv, .json,
// report.html).
#include <fmt/format.h>

#include <filesystem>

#include "credence/compare.h"
#include "report/report_page.h"
#include "report/verdict_output.h"
#include "util/atomic_file.h"

namespace credence {
namespace {

Status write_into(const std::string& out_dir, const std::string& name, const std::string& text) {
  return write_file_atomically((std::filesystem::path(out_dir) / name).string(), text);
}

std::string summary_text(const CompareRequest& request, const std::vector<CompareOutcome>& outcomes,
                         const std::vector<MethodRun>& runs, const TextTable& table,
                         const std::string& failures) {
  std::string text = fmt::format("compare on {} (test rows: {})\n\n{}", request.data_path,
                                 runs.front().assessment.rows.size(), render_text(table));
  text += "\n";
  for (const MethodRun& run : runs) {
    if (run.verdict) text += verdict_text(*run.verdict, run.label);
  }
  if (!failures.empty()) text += "\n" + failures;
  for (const CompareOutcome& o : outcomes) {
    if (!o.budget_note.empty()) text += fmt::format("\nnote, {}: {}\n", o.entry.label, o.budget_note);
  }
  text += fmt::format("\n{}\n", cautions_text());
  return text;
}

}  // namespace

Result<CompareSummary> run_compare_job(const CompareRequest& request) {
  Result<std::vector<CompareOutcome>> outcomes = run_compare(request);
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
  CompareSummary summary;
  summary.text = summary_text(request, *outcomes, runs, table, failures);
  summary.csv = render_csv(table);
  summary.json = score_json(runs);
  const std::string& out = request.out_dir;
  CREDENCE_RETURN_IF_ERROR(write_into(out, "summary.txt", summary.text));
  CREDENCE_RETURN_IF_ERROR(write_into(out, "summary.csv", summary.csv));
  CREDENCE_RETURN_IF_ERROR(write_into(out, "summary.json", summary.json));
  CREDENCE_RETURN_IF_ERROR(write_into(
      out, "report.html",
      report_page(fmt::format("credence compare: {}", request.data_path), runs, request.data_path)));
  summary.outcomes = std::move(*outcomes);
  return summary;
}

}  // namespace credence
