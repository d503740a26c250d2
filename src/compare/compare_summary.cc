// run_compare_job: a comparison and its summary files (summary.txt, .csv, .json,
// report.html).
#include <fmt/format.h>

#include <cctype>
#include <cstdint>
#include <filesystem>

#include "credence/compare.h"
#include "report/report_page.h"
#include "report/verdict_output.h"
#include "util/atomic_file.h"
#include "util/json.h"

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

// "max R-hat" -> "max_r_hat", "bulk-ESS/s" -> "bulk_ess_s": lower case, every run of
// other characters one underscore.
std::string snake_case(const std::string& name) {
  std::string out;
  for (char c : name) {
    if (std::isalnum(static_cast<unsigned char>(c))) {
      out += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    } else if (!out.empty() && out.back() != '_') {
      out += '_';
    }
  }
  while (!out.empty() && out.back() == '_') out.pop_back();
  return out;
}

// The score table for programs: snake_case headers, and an empty cell where the terminal
// table shows "-" (does not apply) or a number is not finite.
std::string summary_csv(TextTable table) {
  for (TextColumn& column : table.columns) column.name = snake_case(column.name);
  for (std::vector<std::string>& row : table.rows) {
    for (std::string& cell : row) {
      if (cell == "-" || cell == "nan" || cell == "-nan" || cell == "inf" || cell == "-inf") {
        cell.clear();
      }
    }
  }
  return render_csv(table);
}

// `text` (JSON ending in a newline) indented by two more spaces after each inner newline.
std::string indented(const std::string& text) {
  std::string out;
  for (std::size_t i = 0; i < text.size(); ++i) {
    out += text[i];
    if (text[i] == '\n' && i + 1 < text.size()) out += "  ";
  }
  while (!out.empty() && out.back() == '\n') out.pop_back();
  return out;
}

std::string summary_json(const CompareRequest& request, const CompareBudget& budget,
                         const std::vector<MethodRun>& runs) {
  const AssessJobResult& scored = runs.front().assessment;
  JsonWriter j;
  j.begin_object();
  j.key("budget").begin_object();
  j.key("steps_per_chain").value(budget.steps);
  j.key("chains").value(request.chains);
  j.key("batch_rows").value(request.batch_rows);
  j.key("train_rows").value(budget.train_rows);
  j.key("epochs").value(request.epochs > 0 ? request.epochs
                                           : static_cast<double>(budget.steps) /
                                                 static_cast<double>(steps_per_pass(
                                                     budget.train_rows, request.batch_rows)));
  j.key("sized_to_table").value(request.epochs == 0);
  j.key("samples_per_chain").value(budget.samples);
  j.end_object();
  j.key("data").begin_object();
  j.key("file").value(request.data_path);
  j.key("sha256").value(scored.data_sha256);
  j.key("target").value(request.data.schema.target);
  j.key("classes").begin_array();
  for (const std::string& name : scored.class_names) j.value(name);
  j.end_array();
  j.end_object();
  j.key("split").begin_object();
  j.key("scored").value(scored.split_name);
  j.key("scored_rows").value(static_cast<std::int64_t>(scored.rows.size()));
  j.key("test_fraction").value(request.data.split.test_fraction);
  j.key("val_fraction").value(request.data.split.val_fraction);
  const std::uint64_t seed = request.data.split.seed;
  if (seed <= static_cast<std::uint64_t>(INT64_MAX)) {
    j.key("seed").value(static_cast<std::int64_t>(seed));
  } else {
    j.key("seed").value(fmt::format("{}", seed));  // beyond what every JSON reader keeps exact
  }
  j.end_object();
  j.end_object();
  // The per-method rows (score_json's array) go last, under "methods".
  std::string head = j.str();
  head.resize(head.rfind('}'));
  while (!head.empty() && head.back() == '\n') head.pop_back();
  return head + ",\n  \"methods\": " + indented(score_json(runs)) + "\n}\n";
}

}  // namespace

Result<CompareSummary> run_compare_job(const CompareRequest& request) {
  CompareBudget budget;
  Result<std::vector<CompareOutcome>> outcomes = run_compare(request, &budget);
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
  summary.csv = summary_csv(table);
  summary.json = summary_json(request, budget, runs);
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
