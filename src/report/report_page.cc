// Loading runs for a report, the score table, and the HTML page.
#include "report/report_page.h"

#include <fmt/format.h>

#include <cmath>
#include <limits>

#include "util/json.h"
#include "report/verdict_output.h"
#include "report/stein_output.h"
#include "credence/plot.h"
#include "credence/samplers_settings.h"
#include "credence/version.h"
#include "report/decision_figures.h"
#include "report/settings_view.h"
#include "report/verdict_section.h"
#include "util/log.h"

namespace credence {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string num(double v, int digits = 4) {
  return std::isfinite(v) ? fmt::format("{:.{}f}", v, digits) : "-";
}


bool is_sampler_run(const MethodRun& run) {
  Result<Method> method = parse_method(report::method_of(run.header));
  return method.ok() && is_sampler(*method);
}

// The pooled kernel Stein discrepancy, or "-" when it was not computed (optimizers,
// a skipped run, or a caller that did not ask for it).
std::string ksd_text(const MethodRun& run) {
  return run.stein && run.stein->computed ? num(run.stein->pooled.ksd, 4) : "-";
}

std::string verdict_text(const MethodRun& run) {
  if (!run.diagnostics) return is_sampler_run(run) ? "-" : "optimizer";
  switch (run.diagnostics->verdict) {
    case MixingVerdict::kMixed:
      return "mixed";
    case MixingVerdict::kNotMixed:
      return "not mixed";
    case MixingVerdict::kSingleChain:
      return "one chain";
    case MixingVerdict::kNotEnoughDraws:
      return "too few draws";
  }
  return "-";
}

// Correct / wrong split of one per-row quantity.
HistogramChart right_wrong_histogram(const MethodRun& run, const Eigen::VectorXd& values,
                                     const std::string& title, const std::string& x_label) {
  const ScoredEnsemble& s = run.assessment.scored;
  const std::vector<std::int32_t> predicted = predicted_classes(s.split.log_mean);
  HistogramSeries right{"right", {}};
  HistogramSeries wrong{"wrong", {}};
  for (Eigen::Index i = 0; i < values.size(); ++i) {
    const bool ok = predicted[static_cast<std::size_t>(i)] ==
                    run.assessment.labels[static_cast<std::size_t>(i)];
    (ok ? right : wrong).values.push_back(values[i]);
  }
  HistogramChart chart;
  chart.title = title;
  chart.x_label = x_label;
  chart.bins = 24;
  chart.lo = 0;
  chart.series = {std::move(right), std::move(wrong)};
  chart.frame = {420, 300};
  return chart;
}

TraceChart trace_chart(const MethodRun& run) {
  TraceChart chart;
  chart.title = fmt::format("{}: potential during training", run.label);
  chart.y_label = "U (minibatch estimate)";
  if (run.diagnostics && run.diagnostics->burn_in) chart.burn_in = static_cast<double>(*run.diagnostics->burn_in);
  for (std::size_t c = 0; c < run.traces.size(); ++c) {
    LineSeries series{fmt::format("chain {}", c), {}, {}};
    for (const TraceRecord& t : run.traces[c]) {
      series.x.push_back(static_cast<double>(t.step));
      series.y.push_back(t.potential);
    }
    chart.chains.push_back(std::move(series));
  }
  return chart;
}

void data_section(HtmlReport& page, const std::vector<MethodRun>& runs,
                  const std::string& data_path) {
  const MethodRun& first = runs.front();
  const RunHeader& h = first.header;
  page.section("Data and split");
  std::string classes;
  for (std::size_t k = 0; k < h.preprocessing.class_names.size(); ++k) {
    classes += (k ? ", " : "") + h.preprocessing.class_names[k];
  }
  page.key_values({
      {"data file", h.data_file},
      {"sha-256", h.data_sha256},
      {"rows", fmt::format("{}", h.data_rows)},
      {"target", fmt::format("{} ({})", h.preprocessing.target, classes)},
      {"split", fmt::format("train {}, validation {}, test {}", h.train_rows.size(),
                            h.val_rows.size(), h.test_rows.size())},
      {"encoded inputs", fmt::format("{}", h.preprocessing.input_width)},
      {"scored", fmt::format("{} ({} rows of {})", first.assessment.split_name,
                             first.assessment.rows.size(), data_path)},
  });
}

void scores_section(HtmlReport& page, const std::vector<MethodRun>& runs) {
  page.section("Scores on held-out rows");
  // The page shows the discrepancy with the other sample-quality figures (mixing
  // section); a 14th column would not fit an 800-pixel window.
  page.table(score_table(runs, /*with_ksd=*/false),
             std::string(runs.size() > 1 ? "The model average of each run on the same rows; best "
                                           "per column in bold. "
                                         : "The model average on the scored rows. ") +
                 "Lower is better for NLL, Brier, ECE and MCE. ECE and MCE: 15 equal-width bins.");
  const TextTable intervals = interval_table(runs);
  if (!intervals.rows.empty()) {
    page.table(intervals,
               "Percentile bootstrap intervals over the scored rows (1000 resamples unless "
               "set otherwise). ECE is biased upward under resampling, so its interval can sit "
               "above the point value.");
  }
  TextTable alone;
  alone.column("method").column("samples").column("accuracy: average", ColumnAlign::kAuto, BestValue::kHighest);
  alone.column("one sample").column("NLL: average", ColumnAlign::kAuto, BestValue::kLowest);
  alone.column("one sample").column("ECE: average").column("one sample");
  for (const MethodRun& run : runs) {
    const ScoredEnsemble& s = run.assessment.scored;
    const MeanSd acc = member_mean_sd(s.members, &MemberScores::accuracy);
    const MeanSd nll = member_mean_sd(s.members, &MemberScores::nll);
    const MeanSd ece = member_mean_sd(s.members, &MemberScores::ece);
    alone.add_row({run.label, fmt::format("{}", run.assessment.samples), num(s.metrics.accuracy),
                   num(acc.mean), num(s.metrics.nll), num(nll.mean),
                   num(s.metrics.width_bins.ece), num(ece.mean)});
  }
  page.table(alone,
             "What averaging buys: each run's model average beside the mean score of one kept "
             "sample predicting alone.");
  const MethodRun& first = runs.front();
  if (first.assessment.scored.truth) {
    TextTable truth;
    truth.column("method").column("KL from truth", ColumnAlign::kAuto, BestValue::kLowest);
    truth.column("abs error", ColumnAlign::kAuto, BestValue::kLowest).column("NLL").column("NLL of truth");
    for (const MethodRun& run : runs) {
      if (!run.assessment.scored.truth) continue;
      const TruthScores& t = *run.assessment.scored.truth;
      truth.add_row({run.label, num(t.kl), num(t.mae), num(t.model_nll), num(t.truth_nll)});
    }
    page.table(truth, "Against the true class probabilities the invented table was drawn from.");
  }
}

void reliability_section(HtmlReport& page, const std::vector<MethodRun>& runs) {
  page.section("Reliability");
  ReliabilityChart chart;
  chart.title = "Accuracy against confidence (equal-width bins)";
  for (const MethodRun& run : runs) {
    chart.series.push_back({run.label, run.assessment.scored.metrics.width_bins});
  }
  page.figure(runs.size() > 1 ? render_reliability_panels(chart, 3) : render_reliability_diagram(chart),
              "Bars reach the accuracy of the rows in each bin; the tick marks their mean "
              "confidence. A calibrated model's ticks sit on the bar tops and the diagonal.");
  ReliabilityChart mass;
  mass.title = "Equal-mass bins";
  for (const MethodRun& run : runs) {
    mass.series.push_back({run.label, run.assessment.scored.metrics.mass_bins});
  }
  page.figure(runs.size() > 1 ? render_reliability_panels(mass, 3) : render_reliability_diagram(mass),
              "The same rows in bins of equal count, so sparse high-confidence bins do not "
              "hide in a wide interval.");
}

void abstain_section(HtmlReport& page, const std::vector<MethodRun>& runs) {
  page.section("Accuracy when abstaining");
  LineChart by_entropy;
  by_entropy.title = "Set aside the most uncertain rows first (entropy)";
  by_entropy.x_label = "fraction of rows kept";
  by_entropy.y_label = "accuracy on kept rows";
  LineChart by_mi = by_entropy;
  by_mi.title = "Ranked by mutual information (lack of data)";
  for (const MethodRun& run : runs) {
    const Assessment& a = run.assessment.scored.metrics;
    by_entropy.series.push_back(rejection_series(run.label, a.rejection_by_entropy));
    if (a.rejection_by_mutual_info && run.assessment.samples > 1) {
      by_mi.series.push_back(rejection_series(run.label, *a.rejection_by_mutual_info));
    }
  }
  page.figure(render_line_chart(by_entropy),
              "A curve that rises as rows are set aside means the doubt points at the errors.");
  if (!by_mi.series.empty()) {
    page.figure(render_line_chart(by_mi),
                "Only ensembles carry mutual information; a single network has none.");
  }
}

void doubt_section(HtmlReport& page, const std::vector<MethodRun>& runs) {
  page.section("Doubt on right and wrong predictions");
  for (const MethodRun& run : runs) {
    const ScoredEnsemble& s = run.assessment.scored;
    page.figure(render_histogram(right_wrong_histogram(
                    run, s.split.total, fmt::format("{}: entropy", run.label), "nats")),
                "Total doubt of the model average.");
    if (run.assessment.samples > 1) {
      page.figure(render_histogram(right_wrong_histogram(
                      run, s.split.mutual_info, fmt::format("{}: mutual information", run.label),
                      "nats")),
                  "The part of the doubt due to lack of data.");
    }
  }
}

void traces_section(HtmlReport& page, const std::vector<MethodRun>& runs) {
  page.section("Training traces");
  for (const MethodRun& run : runs) {
    if (run.traces.empty()) continue;
    const TraceChart chart = trace_chart(run);
    page.figure(render_trace_chart(chart),
                std::string("One panel per chain on shared axes; the y range leaves out the top "
                            "and bottom 1% of values, so an early spike runs off the top") +
                    (std::isfinite(chart.burn_in) ? "; the dashed line ends burn-in." : "."));
  }
}

void diagnostics_section(HtmlReport& page, const std::vector<MethodRun>& runs) {
  page.section("Mixing diagnostics");
  page.paragraph(
      "Weights are not compared across chains: hidden units can be permuted and sign-flipped "
      "without changing the network, so R-hat and ESS are computed on function-space "
      "summaries (probe log-likelihood, probe predictive probabilities, layer norms). "
      "Thresholds: R-hat above 1.01, bulk- or tail-ESS below 100 per chain (\"Rank-"
      "normalization, folding, and localization: an improved R-hat for assessing "
      "convergence of MCMC\", Bayesian Analysis, 2021).");
  TextTable table;
  table.column("method").column("chains").column("draws per chain").column("max R-hat");
  table.column("min bulk-ESS").column("min tail-ESS").column("flagged").column("verdict");
  table.column("mean |v|/c").column("KSD");
  bool any = false;
  for (const MethodRun& run : runs) {
    if (!run.diagnostics) continue;
    any = true;
    const RunDiagnostics& d = *run.diagnostics;
    std::string speed = "-";
    if (!d.speed_ratio_per_chain.empty()) {
      double sum = 0;
      for (double v : d.speed_ratio_per_chain) sum += v;
      speed = num(sum / static_cast<double>(d.speed_ratio_per_chain.size()), 3);
    }
    table.add_row({run.label, fmt::format("{}", d.chains), fmt::format("{}", d.draws_per_chain),
                   num(d.max_rhat, 3), num(d.min_ess_bulk, 0), num(d.min_ess_tail, 0),
                   fmt::format("{}", d.flagged), verdict_text(run), speed, ksd_text(run)});
  }
  if (any) {
    page.table(table, "Over the function-space summaries of each sampler run.");
  } else {
    page.paragraph("No sampler run with kept samples: nothing to diagnose.");
  }
  for (const MethodRun& run : runs) {
    if (!run.diagnostics) continue;
    if (!run.diagnostics->speed_note.empty()) {
      page.note(fmt::format("{}: {}", run.label, run.diagnostics->speed_note));
    }
    if (run.diagnostics->verdict == MixingVerdict::kNotMixed) {
      page.note(fmt::format("{}: the chains disagree; run longer or with more chains before "
                            "trusting its ensemble.",
                            run.label),
                NoteKind::kWarning);
    }
  }
  for (const MethodRun& run : runs) {
    if (run.stein) add_stein_html(page, run.label, *run.stein);
  }
}

void settings_section(HtmlReport& page, const std::vector<MethodRun>& runs) {
  page.section("Settings and provenance");
  for (const MethodRun& run : runs) {
    std::vector<std::pair<std::string, std::string>> items = {
        {"run file", run.run_path},
        {"created", fmt::format("{} by credence {}", run.header.created_utc,
                                run.header.tool_version)},
        {"command", run.header.command_line},
        {"status", std::string(run_status_name(run.summary.status))},
        {"kept samples", fmt::format("{} ({} chains)", run.summary.samples, run.header.chains)},
    };
    for (auto& row : report::settings_rows(run.header)) items.push_back(std::move(row));
    page.paragraph(run.label);
    page.key_values(std::move(items));
  }
}

}  // namespace

double bulk_ess_per_second(const MethodRun& run) {
  if (!run.diagnostics || !(run.seconds > 0)) return kNaN;
  return run.diagnostics->min_ess_bulk / run.seconds;
}

Result<MethodRun> load_method_run(const std::string& run_path, const std::string& data_path,
                                  const std::string& label, const AssessJobOptions& options) {
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(run_path);
  if (!reader.ok()) return reader.status();
  const RunReader& run = **reader;
  MethodRun out;
  out.header = run.header();
  // The method names the run in tables and figures; its file is listed under settings.
  out.label = label.empty() ? report::method_of(out.header) : label;
  out.run_path = run_path;
  out.summary = run.summary();
  for (double s : out.summary.seconds_per_chain) out.seconds += s;
  for (std::int64_t g : out.summary.gradient_evals_per_chain) out.gradient_evals += g;
  Result<AssessJobResult> assessment = run_assess_job(run, data_path, options);
  if (!assessment.ok()) return assessment.status();
  out.assessment = std::move(*assessment);
  for (int c = 0; c < out.header.chains; ++c) {
    Result<std::vector<TraceRecord>> trace = run.traces(c);
    if (!trace.ok()) return trace.status();
    out.traces.push_back(std::move(*trace));
  }
  if (is_sampler_run(out) && out.summary.samples > 0) {
    Result<RunDiagnostics> diagnostics = diagnose_run(run);
    if (diagnostics.ok()) {
      out.diagnostics = std::move(*diagnostics);
    } else {
      log().warn("{}: no diagnostics: {}", run_path, diagnostics.status().message());
    }
  }
  return out;
}

TextTable score_table(const std::vector<MethodRun>& runs, bool with_ksd) {
  TextTable t;
  t.column("method", ColumnAlign::kLeft);
  t.column("accuracy", ColumnAlign::kAuto, BestValue::kHighest);
  t.column("NLL", ColumnAlign::kAuto, BestValue::kLowest);
  t.column("Brier", ColumnAlign::kAuto, BestValue::kLowest);
  t.column("ECE", ColumnAlign::kAuto, BestValue::kLowest);
  t.column("MCE", ColumnAlign::kAuto, BestValue::kLowest);
  t.column("AUROC", ColumnAlign::kAuto, BestValue::kHighest);
  t.column("seconds");
  t.column("gradients");
  t.column("bulk-ESS/s", ColumnAlign::kAuto, BestValue::kHighest);
  t.column("max R-hat");
  if (with_ksd) t.column("KSD", ColumnAlign::kAuto, BestValue::kLowest);
  t.column("mixing", ColumnAlign::kLeft);
  for (const MethodRun& run : runs) {
    const Assessment& a = run.assessment.scored.metrics;
    std::vector<std::string> row = {
        run.label, num(a.accuracy), num(a.nll), num(a.brier), num(a.width_bins.ece),
        num(a.width_bins.mce), a.class_auroc.macro ? num(*a.class_auroc.macro) : "-",
        num(run.seconds, 1), fmt::format("{}", run.gradient_evals),
        num(bulk_ess_per_second(run), 2),
        run.diagnostics ? num(run.diagnostics->max_rhat, 2) : "-"};
    if (with_ksd) row.push_back(ksd_text(run));
    row.push_back(verdict_text(run));
    t.add_row(std::move(row));
  }
  return t;
}

TextTable interval_table(const std::vector<MethodRun>& runs) {
  TextTable t;
  t.column("method", ColumnAlign::kLeft).column("NLL").column("95% interval");
  t.column("Brier").column("95% interval").column("ECE").column("95% interval");
  for (const MethodRun& run : runs) {
    const Assessment& a = run.assessment.scored.metrics;
    if (!a.intervals) continue;
    auto iv = [](const Interval& i) { return fmt::format("{} to {}", num(i.lo), num(i.hi)); };
    t.add_row({run.label, num(a.nll), iv(a.intervals->nll), num(a.brier),
               iv(a.intervals->brier), num(a.width_bins.ece), iv(a.intervals->ece)});
  }
  return t;
}

std::string score_json(const std::vector<MethodRun>& runs) {
  JsonWriter j;
  j.begin_array();
  for (const MethodRun& run : runs) {
    const Assessment& a = run.assessment.scored.metrics;
    j.begin_object();
    j.key("method").value(run.label);
    j.key("run").value(run.run_path);
    j.key("rows").value(static_cast<std::int64_t>(run.assessment.rows.size()));
    j.key("samples").value(run.assessment.samples);
    j.key("accuracy").value(a.accuracy);
    j.key("nll").value(a.nll);
    j.key("brier").value(a.brier);
    j.key("ece").value(a.width_bins.ece);
    j.key("mce").value(a.width_bins.mce);
    j.key("ece_mass").value(a.mass_bins.ece);
    j.key("auroc").value_or_null(a.class_auroc.macro);
    if (a.intervals) {
      j.key("nll_interval").numbers(std::vector<double>{a.intervals->nll.lo, a.intervals->nll.hi});
      j.key("brier_interval")
          .numbers(std::vector<double>{a.intervals->brier.lo, a.intervals->brier.hi});
      j.key("ece_interval").numbers(std::vector<double>{a.intervals->ece.lo, a.intervals->ece.hi});
    }
    j.key("budget_note").value(run.budget_note);
    j.key("wall_seconds").value(run.seconds);
    j.key("gradient_evals").value(run.gradient_evals);
    j.key("bulk_ess_per_second").value(bulk_ess_per_second(run));
    j.key("min_bulk_ess").value(run.diagnostics ? run.diagnostics->min_ess_bulk : kNaN);
    j.key("max_rhat").value(run.diagnostics ? run.diagnostics->max_rhat : kNaN);
    j.key("ksd").value(run.stein && run.stein->computed ? run.stein->pooled.ksd : kNaN);
    j.key("mixing").value(run.diagnostics
                              ? std::string(mixing_verdict_name(run.diagnostics->verdict))
                              : std::string("not_applicable"));
    if (run.verdict) write_verdict(j.key("verdict"), *run.verdict);
    if (run.assessment.scored.truth) {
      j.key("truth_kl").value(run.assessment.scored.truth->kl);
      j.key("truth_mae").value(run.assessment.scored.truth->mae);
    }
    j.end_object();
  }
  j.end_array();
  return j.str();
}

std::string report_page(const std::string& title, const std::vector<MethodRun>& runs,
                        const std::string& data_path) {
  HtmlReport page(title);
  const MethodRun& first = runs.front();
  page.subtitle(fmt::format("{} · {} run{} · scored on {} {} rows", first.header.data_file,
                            runs.size(), runs.size() == 1 ? "" : "s",
                            first.assessment.rows.size(), first.assessment.split_name));
  data_section(page, runs, data_path);
  scores_section(page, runs);
  std::vector<report::LabelledVerdict> verdicts;
  for (const MethodRun& run : runs) verdicts.push_back({run.label, run.verdict ? &*run.verdict : nullptr});
  report::verdict_section(page, verdicts);
  reliability_section(page, runs);
  report::decisions_section(page, runs);
  abstain_section(page, runs);
  doubt_section(page, runs);
  diagnostics_section(page, runs);
  traces_section(page, runs);
  settings_section(page, runs);
  page.cautions();
  page.footer(fmt::format("credence {}", kVersion));
  return page.render();
}

}  // namespace credence
