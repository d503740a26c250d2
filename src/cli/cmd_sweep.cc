// `credence sweep`: every method at every learning rate; how robust is each to its step?
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "cli/commands.h"
#include "cli/compare_flags.h"
#include "cli/sweep_map.h"
#include "credence/tuning_map.h"
#include "credence/plot.h"

namespace credence::cli {
namespace {

struct SweepFlags {
  CompareFlags compare;
  std::string step_sizes = "1e-3:1:7";
  TuningMapFlags map;  // --masses x --max-moves: rsghmc's tuning map (sweep_map.h)
};

std::string num(double v, int digits = 4) {
  return std::isfinite(v) ? fmt::format("{:.{}f}", v, digits) : "-";
}

Status run_sweep(const SweepFlags& flags, const GlobalOptions& global) {
  if (tuning_map_requested(flags.map)) {
    return run_tuning_map(flags.map, flags.compare, flags.step_sizes, global);
  }
  Result<std::vector<double>> rates = parse_positive_values(flags.step_sizes, "--step-sizes");
  if (!rates.ok()) return rates.status();
  std::vector<Method> methods;
  Result<CompareRequest> request = compare_request(flags.compare, methods);
  if (!request.ok()) return request.status();
  for (Method m : methods) {
    // rsghmc's derived speed of light and mass cancel its step (method_flags.cc): every
    // learning rate would give the same samples.
    if (m == Method::kRsghmc) {
      return Status::invalid_input(
          "--methods: sweep varies the learning rate, which rsghmc does not read (each "
          "weight's move per step comes from --max-move); sweep rsgd, or map rsghmc with "
          "--masses and --max-moves");
    }
  }
  for (Method m : methods) {
    for (double lr : *rates) {
      const std::string name(method_name(m));
      request->entries.push_back({m, lr, fmt::format("{} lr={:.3g}", name, lr),
                                  fmt::format("{}_lr{:.3g}", name, lr)});
    }
  }
  request->quiet = global.quiet;
  request->command_line = global.command_line;
  Result<std::vector<CompareOutcome>> outcomes = run_compare(*request);
  if (!outcomes.ok()) return outcomes.status();

  TextTable table;
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
  for (const CompareOutcome& o : *outcomes) {
    const double lr = *o.entry.learning_rate;
    const std::size_t which = static_cast<std::size_t>(
        std::find(methods.begin(), methods.end(), o.entry.method) - methods.begin());
    if (!o.run) {
      table.add_row({std::string(method_name(o.entry.method)), fmt::format("{:.3g}", lr), "-",
                     "-", "-", fmt::format("all {}", request->chains),
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

  LineChart nll_chart;
  nll_chart.title = "NLL on the test rows against learning rate";
  nll_chart.x_label = "learning rate (mean-loss units)";
  nll_chart.y_label = "NLL (nats)";
  nll_chart.log_x = true;
  nll_chart.markers = true;
  nll_chart.series = nll_series;
  // The axis spans the swept rates, also where every chain diverged (marked with a cross).
  nll_chart.x_min = *std::min_element(rates->begin(), rates->end());
  nll_chart.x_max = *std::max_element(rates->begin(), rates->end());
  nll_chart.missing = diverged_at;
  nll_chart.missing_label = "every chain diverged";
  LineChart ece_chart = nll_chart;
  ece_chart.title = "ECE on the test rows against learning rate";
  ece_chart.y_label = "ECE (15 equal-width bins)";
  ece_chart.series = ece_series;

  const std::string out_dir = request->out_dir;
  std::string text = fmt::format("sweep on {}: {} trainings\n\n{}", flags.compare.data_path,
                                 outcomes->size(), render_text(table));
  text += "\nA missing point is a learning rate at which every chain diverged.\n";
  text += fmt::format("\n{}\n", cautions_text());
  CREDENCE_RETURN_IF_ERROR(write_output(out_dir, "sweep.txt", text));
  CREDENCE_RETURN_IF_ERROR(write_output(out_dir, "sweep.csv", render_csv(table)));
  CREDENCE_RETURN_IF_ERROR(write_output(out_dir, "sweep.json", render_json(table)));
  CREDENCE_RETURN_IF_ERROR(write_output(out_dir, "nll.svg", render_line_chart(nll_chart)));
  CREDENCE_RETURN_IF_ERROR(write_output(out_dir, "ece.svg", render_line_chart(ece_chart)));

  HtmlReport page(fmt::format("credence sweep: {}", flags.compare.data_path));
  page.subtitle(fmt::format("{} methods x {} learning rates, {} chains each, same budget",
                            methods.size(), rates->size(), request->chains));
  page.section("Robustness to the step size");
  page.figure(render_line_chart(nll_chart),
              "Lower is better; a cross on the top edge marks a learning rate at which every "
              "chain diverged.");
  page.figure(render_line_chart(ece_chart), "Lower is better.");
  page.table(table, "Every training of the sweep on the same split and gradient budget.");
  page.cautions();
  CREDENCE_RETURN_IF_ERROR(write_output(out_dir, "report.html", page.render()));
  std::fputs(text.c_str(), stdout);
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
  add_compare_flags(*sub, flags->compare, "sghmc,rsghmc");
  sub->add_option("--step-sizes", flags->step_sizes,
                  "Learning rates (mean-loss units, as train's --lr): a list 0.001,0.01 or a "
                  "log range FROM:TO:COUNT")
      ->capture_default_str();
  add_tuning_map_flags(*sub, flags->map);
  commands.push_back({sub, [flags, &global] { return run_sweep(*flags, global); }});
}

}  // namespace credence::cli
