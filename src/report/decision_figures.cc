// The report's two-class section: decisions, precision-recall, ROC, positive-class curve.
#include "report/decision_figures.h"

#include <fmt/format.h>

#include <cmath>

namespace credence::report {
namespace {

std::string num(double v, int digits = 3) {
  return std::isfinite(v) ? fmt::format("{:.{}f}", v, digits) : "-";
}

bool has_decisions(const MethodRun& run) { return run.assessment.decisions.has_value(); }

std::string positive_name(const MethodRun& run) {
  return run.assessment.positive ? run.assessment.positive->name : std::string("positive");
}

// The share of positive rows: what precision a model without skill reaches at any recall.
double prevalence(const DecisionScores& d) {
  const ConfusionCounts& c = d.counts;
  const auto n = c.true_positive + c.false_positive + c.true_negative + c.false_negative;
  return n > 0 ? static_cast<double>(c.true_positive + c.false_negative) / static_cast<double>(n)
               : std::nan("");
}

std::string threshold_words(const MethodRun& run) {
  const DecisionReport& d = *run.assessment.decisions;
  const ThresholdSettings& s = d.choice.settings;
  switch (s.rule) {
    case ThresholdRule::kCost:
      return fmt::format("the least total cost (false positive {:g}, false negative {:g}) on {} "
                         "validation rows",
                         s.cost_fp, s.cost_fn, d.choice_rows);
    case ThresholdRule::kSensitivity:
      return fmt::format("the highest threshold reaching sensitivity {:g} on {} validation rows",
                         s.target_sensitivity, d.choice_rows);
    case ThresholdRule::kFixed:
      break;
  }
  return "a fixed threshold (--threshold, default 0.5)";
}

LineChart unit_chart(std::string title, std::string x_label, std::string y_label) {
  LineChart chart;
  chart.title = std::move(title);
  chart.x_label = std::move(x_label);
  chart.y_label = std::move(y_label);
  chart.x_min = 0;
  chart.x_max = 1;
  chart.y_min = 0;
  chart.y_max = 1;
  chart.frame = {340, 360};  // three in a row at 1,400 px, two at 800
  return chart;
}

TextTable decision_table(const std::vector<MethodRun>& runs) {
  const bool several = runs.size() > 1;
  const BestValue high = several ? BestValue::kHighest : BestValue::kNone;
  TextTable t;
  t.column("method", ColumnAlign::kLeft).column("threshold");
  t.column("TP / FP / TN / FN", ColumnAlign::kRight);
  t.column("sensitivity").column("specificity").column("PPV").column("NPV");
  t.column("F1", ColumnAlign::kAuto, high);
  t.column("average precision", ColumnAlign::kAuto, high);
  t.column("ROC area", ColumnAlign::kAuto, high);
  for (const MethodRun& run : runs) {
    if (!has_decisions(run)) continue;
    const DecisionReport& d = *run.assessment.decisions;
    const DecisionScores& a = d.at_threshold;
    const ConfusionCounts& c = a.counts;
    t.add_row({run.label, num(a.threshold),
               fmt::format("{} / {} / {} / {}", c.true_positive, c.false_positive,
                           c.true_negative, c.false_negative),
               num(a.sensitivity),
               num(a.specificity), num(a.ppv), num(a.npv), num(a.f1),
               d.precision_recall ? num(d.precision_recall->average_precision) : "-",
               d.roc ? num(d.roc->area) : "-"});
  }
  return t;
}

// "adam 0.412, sgld 0.430": one number per run, for captions.
template <typename Number>
std::string per_run(const std::vector<MethodRun>& runs, Number number) {
  std::string out;
  for (const MethodRun& run : runs) {
    if (!has_decisions(run)) continue;
    out += fmt::format("{}{} {}", out.empty() ? "" : ", ", run.label, number(run));
  }
  return out;
}

}  // namespace

LineChart precision_recall_chart(const std::vector<MethodRun>& runs) {
  LineChart chart = unit_chart(
      fmt::format("Precision against recall ({})", positive_name(runs.front())), "recall",
      "precision");
  for (const MethodRun& run : runs) {
    if (!has_decisions(run) || !run.assessment.decisions->precision_recall) continue;
    const PrecisionRecallCurve& c = *run.assessment.decisions->precision_recall;
    chart.series.push_back({fmt::format("{}  AP {:.3f}", run.label, c.average_precision),
                            c.recall, c.precision});
  }
  return chart;
}

LineChart roc_chart(const std::vector<MethodRun>& runs) {
  LineChart chart = unit_chart(fmt::format("ROC curve ({})", positive_name(runs.front())),
                               "false positive rate", "true positive rate");
  chart.diagonal = true;
  chart.diagonal_label = "chance";
  for (const MethodRun& run : runs) {
    if (!has_decisions(run) || !run.assessment.decisions->roc) continue;
    const RocCurve& c = *run.assessment.decisions->roc;
    chart.series.push_back({fmt::format("{}  area {:.3f}", run.label, c.area),
                            c.false_positive_rate, c.true_positive_rate});
  }
  return chart;
}

LineChart positive_reliability_chart(const std::vector<MethodRun>& runs) {
  const std::string positive = positive_name(runs.front());
  LineChart chart = unit_chart(fmt::format("Observed rate of {} against its probability", positive),
                               fmt::format("mean P({}) in bin", positive),
                               fmt::format("observed share {}", positive));
  chart.diagonal = true;
  chart.diagonal_label = "calibrated";
  chart.markers = true;
  for (const MethodRun& run : runs) {
    const std::optional<PositiveClassCurve>& c = run.assessment.scored.metrics.curve_width;
    if (!c) continue;
    chart.series.push_back({run.label, c->mean_probability, c->observed});
  }
  return chart;
}

void decisions_section(HtmlReport& page, const std::vector<MethodRun>& runs) {
  if (runs.empty() || !has_decisions(runs.front())) return;
  const MethodRun& first = runs.front();
  const std::string positive = positive_name(first);
  page.section("Decisions on the positive class");
  page.paragraph(fmt::format(
      "Positive class: {} (chosen by {}). A row is called positive when its probability of {} "
      "is at least the threshold, here chosen by {} and reported on the {} scored rows.",
      positive, first.assessment.positive ? first.assessment.positive->chosen_by : "default",
      positive, threshold_words(first), first.assessment.rows.size()));
  page.table(decision_table(runs),
             "TP, FP, TN, FN: true and false positives and negatives at the threshold. PPV and "
             "NPV: the share of positive and negative calls that are right.");
  const double base = prevalence(first.assessment.decisions->at_threshold);
  page.figure(render_line_chart(precision_recall_chart(runs)),
              fmt::format("Average precision (the step-wise area under the curve): {}. A model "
                          "without skill has precision {} (the share of {} rows) at every recall.",
                          per_run(runs, [](const MethodRun& r) {
                            const auto& pr = r.assessment.decisions->precision_recall;
                            return pr ? num(pr->average_precision) : std::string("-");
                          }),
                          num(base), positive));
  page.figure(render_line_chart(roc_chart(runs)),
              fmt::format("Area under the ROC curve: {}. The dashed diagonal is chance (area 0.5).",
                          per_run(runs, [](const MethodRun& r) {
                            const auto& roc = r.assessment.decisions->roc;
                            return roc ? num(roc->area) : std::string("-");
                          })));
  const LineChart reliability = positive_reliability_chart(runs);
  const auto& curve = first.assessment.scored.metrics.curve_width;
  const std::size_t bins = curve && !curve->edges.empty() ? curve->edges.size() - 1 : 0;
  const std::string caption = fmt::format(
      "{} equal-width bins of P({}); a point per non-empty bin. Points on the dashed diagonal "
      "mean the probabilities mean what they say; above it, {} is more common than predicted.",
      bins, positive, positive);
  if (reliability.series.size() <= 1) {
    page.figure(render_line_chart(reliability), caption);
    return;
  }
  std::vector<LineChart> panels;
  for (std::size_t s = 0; s < reliability.series.size(); ++s) {
    LineChart panel = reliability;
    panel.title = reliability.series[s].name;
    panel.series = {reliability.series[s]};
    panel.series[0].name.clear();  // the panel's title names the method
    panel.first_colour = static_cast<int>(s);
    panel.frame = {320, 340};
    panels.push_back(std::move(panel));
  }
  page.figure(render_line_panels(panels, reliability.title, 3), caption);
}

}  // namespace credence::report
