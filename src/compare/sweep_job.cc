// run_sweep_job: every method at every learning rate; tables and plots of the scores
// against the step size.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <sstream>

#include "credence/sweep.h"
#include "credence/tuning_map.h"
#include "util/atomic_file.h"

namespace credence {
namespace {

std::string num(double v, int digits = 4) {
  return std::isfinite(v) ? fmt::format("{:.{}f}", v, digits) : "-";
}

Status write_into(const std::string& out_dir, const std::string& name, const std::string& text) {
  return write_file_atomically((std::filesystem::path(out_dir) / name).string(), text);
}

struct SweepCharts {
  LineChart nll;
  LineChart ece;
};

// The score table and the two charts, from the outcomes in (method, rate) order.
SweepCharts tabulate(const SweepRequest& request, const std::vector<CompareOutcome>& outcomes,
                     TextTable& table) {
  const std::vector<Method>& methods = request.methods;
  table.column("method", ColumnAlign::kLeft).column("learning rate").column("accuracy");
  table.column("NLL", ColumnAlign::kAuto, BestValue::kLowest);
  table.column("ECE", ColumnAlign::kAuto, BestValue::kLowest);
  table.column("diverged chains").column("mixing", ColumnAlign::kLeft);
  std::vector<LineSeries> nll_series, ece_series;
  std::vector<MissingPoint> diverged_at;  // (method, learning rate) where every chain diverged
  for (Method m : methods) {
    nll_series.push_back({std::string(method_name(m)), {}, {}});
    ece_series.push_back({std::string(method_name(m)), {}, {}});
  }
  for (const CompareOutcome& o : outcomes) {
    const double lr = *o.entry.learning_rate;
    const std::size_t which = static_cast<std::size_t>(
        std::find(methods.begin(), methods.end(), o.entry.method) - methods.begin());
    if (!o.run) {
      table.add_row({std::string(method_name(o.entry.method)), fmt::format("{:.3g}", lr), "-",
                     "-", "-", fmt::format("all {}", request.compare.chains),
                     o.diverged ? "diverged" : "failed"});
      if (o.diverged) diverged_at.push_back({which, lr});
      continue;  // no point: the line breaks there
    }
    const Assessment& a = o.run->assessment.scored.metrics;
    int diverged = 0;
    for (ChainStatus s : o.run->summary.chain_status) diverged += s == ChainStatus::kDiverged;
    std::string mixing = "optimizer";
    if (o.run->diagnostics) {
      mixing = std::string(mixing_verdict_name(o.run->diagnostics->verdict));
    }
    table.add_row({std::string(method_name(o.entry.method)), fmt::format("{:.3g}", lr),
                   num(a.accuracy), num(a.nll), num(a.width_bins.ece),
                   fmt::format("{}", diverged), mixing});
    nll_series[which].x.push_back(lr);
    nll_series[which].y.push_back(a.nll);
    ece_series[which].x.push_back(lr);
    ece_series[which].y.push_back(a.width_bins.ece);
  }

  const std::vector<double>& rates = request.learning_rates;
  SweepCharts charts;
  LineChart& nll_chart = charts.nll;
  nll_chart.title = "NLL on the test rows against learning rate";
  nll_chart.x_label = "learning rate (mean-loss units)";
  nll_chart.y_label = "NLL (nats)";
  nll_chart.log_x = true;
  nll_chart.markers = true;
  nll_chart.series = nll_series;
  // The axis spans the swept rates, also where every chain diverged (marked with a cross).
  nll_chart.x_min = *std::min_element(rates.begin(), rates.end());
  nll_chart.x_max = *std::max_element(rates.begin(), rates.end());
  nll_chart.missing = diverged_at;
  nll_chart.missing_label = "every chain diverged";
  charts.ece = nll_chart;
  charts.ece.title = "ECE on the test rows against learning rate";
  charts.ece.y_label = "ECE (15 equal-width bins)";
  charts.ece.series = ece_series;
  return charts;
}

}  // namespace

Result<std::vector<double>> parse_step_sizes(const std::string& text) {
  return parse_positive_values(text, "--step-sizes");  // as the tuning map's axes
}

Result<SweepSummary> run_sweep_job(SweepRequest request) {
  if (request.learning_rates.empty()) return Status::invalid_input("--step-sizes: give at least one");
  for (Method m : request.methods) {
    // rsghmc's derived speed of light and mass cancel its step (method_flags.cc): every
    // learning rate would give the same samples.
    if (m == Method::kRsghmc) {
      return Status::invalid_input(
          "--methods: sweep varies the learning rate, which rsghmc does not read (each "
          "weight's move per step comes from --max-move); sweep rsgd, or map rsghmc with "
          "--masses and --max-moves");
    }
  }
  CompareRequest& compare = request.compare;
  compare.stein_draws_per_chain = 0;  // a sweep scores steps, not sample quality
  for (Method m : request.methods) {
    for (double lr : request.learning_rates) {
      const std::string name(method_name(m));
      compare.entries.push_back({m, lr, fmt::format("{} lr={:.3g}", name, lr),
                                 fmt::format("{}_lr{:.3g}", name, lr)});
    }
  }
  Result<std::vector<CompareOutcome>> outcomes = run_compare(compare);
  if (!outcomes.ok()) return outcomes.status();

  SweepSummary summary;
  const SweepCharts charts = tabulate(request, *outcomes, summary.table);
  const std::string& out_dir = compare.out_dir;
  const TextTable& table = summary.table;
  std::string text = fmt::format("sweep on {}: {} trainings\n\n{}", compare.data_path,
                                 outcomes->size(), render_text(table));
  text += "\nA missing point is a learning rate at which every chain diverged.\n";
  text += fmt::format("\n{}\n", cautions_text());
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "sweep.txt", text));
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "sweep.csv", render_csv(table)));
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "sweep.json", render_json(table)));
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "nll.svg", render_line_chart(charts.nll)));
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "ece.svg", render_line_chart(charts.ece)));

  HtmlReport page(fmt::format("credence sweep: {}", compare.data_path));
  page.subtitle(fmt::format("{} methods x {} learning rates, {} chains each, same budget",
                            request.methods.size(), request.learning_rates.size(),
                            compare.chains));
  page.section("Robustness to the step size");
  page.figure(render_line_chart(charts.nll),
              "Lower is better; a cross on the top edge marks a learning rate at which every "
              "chain diverged.");
  page.figure(render_line_chart(charts.ece), "Lower is better.");
  page.table(table, "Every training of the sweep on the same split and gradient budget.");
  page.cautions();
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "report.html", page.render()));
  summary.text = std::move(text);
  summary.outcomes = std::move(*outcomes);
  return summary;
}

}  // namespace credence
