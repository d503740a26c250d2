// Text and JSON of the two-class decisions in assess (metrics: src/metrics/decisions.cc).
#include "report/decision_output.h"

#include <fmt/format.h>

#include <cmath>
#include <iterator>

namespace credence {
namespace {

std::string num(double v, int digits = 3) {
  return std::isfinite(v) ? fmt::format("{:.{}f}", v, digits) : "-";
}

std::string rule_words(const ThresholdChoice& c, const AssessJobResult& r) {
  const ThresholdSettings& s = c.settings;
  switch (s.rule) {
    case ThresholdRule::kCost:
      return fmt::format("least total cost on the run's {} validation rows (false positive {:g}, "
                         "false negative {:g}; mean cost there {:.4g} per row; for calibrated "
                         "probabilities the cost-optimal threshold would be {:.4g})",
                         r.decisions->choice_rows, s.cost_fp, s.cost_fn, c.mean_cost,
                         s.cost_fp / (s.cost_fp + s.cost_fn));
    case ThresholdRule::kSensitivity:
      return fmt::format("the highest threshold reaching sensitivity {:g} on the run's {} "
                         "validation rows (reached {})",
                         s.target_sensitivity, r.decisions->choice_rows,
                         num(c.on_choice_rows.sensitivity));
    default:
      return "fixed (--threshold; default 0.5)";
  }
}

void curve_text(std::string& out, const PositiveClassCurve& c, const std::string& positive) {
  auto o = std::back_inserter(out);
  fmt::format_to(o, "  {:<18}{:>7}{:>10}{:>9}\n", fmt::format("mean P({})", positive), "rows",
                 "observed", "gap");
  for (std::size_t m = 0; m < c.counts.size(); ++m) {  // non-empty bins only
    fmt::format_to(o, "  {:<18}{:>7}{:>10}{:>+9.3f}\n", num(c.mean_probability[m]), c.counts[m],
                   num(c.observed[m]), c.observed[m] - c.mean_probability[m]);
  }
}

void json_decision(JsonWriter& j, const DecisionScores& d) {
  j.begin_object();
  j.key("threshold").value(d.threshold);
  j.key("true_positive").value(d.counts.true_positive);
  j.key("false_positive").value(d.counts.false_positive);
  j.key("true_negative").value(d.counts.true_negative);
  j.key("false_negative").value(d.counts.false_negative);
  j.key("sensitivity").value(d.sensitivity);
  j.key("specificity").value(d.specificity);
  j.key("ppv").value(d.ppv);
  j.key("npv").value(d.npv);
  j.key("f1").value(d.f1);
  j.end_object();
}

void json_positive_curve(JsonWriter& j, const PositiveClassCurve& c) {
  j.begin_object();
  j.key("edges").numbers(c.edges);
  j.key("observed").numbers(c.observed);
  j.key("mean_probability").numbers(c.mean_probability);
  j.key("counts").numbers(c.counts);
  j.end_object();
}

}  // namespace

void positive_curve_json(JsonWriter& j, const Assessment& a, const std::string& positive) {
  if (!a.curve_width || !a.curve_mass) return;
  j.key("positive_class_curve").begin_object();
  j.key("class").value(positive);
  j.key("width");
  json_positive_curve(j, *a.curve_width);
  j.key("mass");
  json_positive_curve(j, *a.curve_mass);
  j.end_object();
}

void decision_text(std::string& out, const AssessJobResult& r) {
  if (!r.positive || !r.decisions) return;
  auto o = std::back_inserter(out);
  const std::string& pos = r.positive->name;
  const std::string& neg = r.class_names[static_cast<std::size_t>(1 - r.positive->index)];
  const Assessment& a = r.scored.metrics;
  if (a.curve_width) {
    fmt::format_to(o, "\nreliability of P({}) (equal width, {} bins; observed = share of rows "
                      "that are '{}')\n",
                   pos, a.curve_width->edges.size() - 1, pos);
    curve_text(out, *a.curve_width, pos);
  }
  const DecisionReport& d = *r.decisions;
  const DecisionScores& t = d.at_threshold;
  const ConfusionCounts& c = t.counts;
  fmt::format_to(o, "\ndecisions: '{}' where P({}) >= {:.4g}, reported on the {} rows ({})\n",
                 pos, pos, t.threshold, r.split_name, r.rows.size());
  fmt::format_to(o, "  threshold: {}\n", rule_words(d.choice, r));
  if (d.choice.settings.rule != ThresholdRule::kFixed && r.split_name == "validation") {
    fmt::format_to(o, "  (chosen and reported on the same rows: read these rates as "
                      "optimistic)\n");
  }
  fmt::format_to(o, "  {:<22}{:>16}{:>16}\n", "", fmt::format("called {}", pos),
                 fmt::format("called {}", neg));
  fmt::format_to(o, "  {:<22}{:>16}{:>16}\n", fmt::format("truly {}", pos), c.true_positive,
                 c.false_negative);
  fmt::format_to(o, "  {:<22}{:>16}{:>16}\n", fmt::format("truly {}", neg), c.false_positive,
                 c.true_negative);
  fmt::format_to(o, "  sensitivity {}  specificity {}  ppv {}  npv {}  f1 {}\n",
                 num(t.sensitivity), num(t.specificity), num(t.ppv), num(t.npv), num(t.f1));
  fmt::format_to(o, "\nprecision-recall and ROC of P({}) on the {} rows: average precision {}, "
                    "ROC area {}\n",
                 pos, r.split_name,
                 d.precision_recall ? num(d.precision_recall->average_precision, 4) : "-",
                 d.roc ? num(d.roc->area, 4) : "-");
  fmt::format_to(o, "  {:<11}{:>8}{:>13}{:>13}{:>8}{:>8}{:>8}\n", "threshold", "called",
                 "sensitivity", "specificity", "ppv", "npv", "f1");
  for (const DecisionScores& p : d.operating_points) {
    const ConfusionCounts& k = p.counts;
    fmt::format_to(o, "  {:<11}{:>8}{:>13}{:>13}{:>8}{:>8}{:>8}\n", num(p.threshold, 1),
                   k.true_positive + k.false_positive, num(p.sensitivity), num(p.specificity),
                   num(p.ppv), num(p.npv), num(p.f1));
  }
}

void decision_json(JsonWriter& j, const AssessJobResult& r) {
  if (!r.positive || !r.decisions) return;
  const DecisionReport& d = *r.decisions;
  j.key("positive_class").begin_object();
  j.key("name").value(r.positive->name);
  j.key("index").value(r.positive->index);
  j.key("chosen_by").value(r.positive->chosen_by);
  j.end_object();
  j.key("decisions").begin_object();
  j.key("rule").value(threshold_rule_name(d.choice.settings.rule));
  j.key("threshold").value(d.choice.threshold);
  j.key("chosen_on").value(d.choice.settings.rule == ThresholdRule::kFixed ? "given"
                                                                           : "validation");
  j.key("chosen_on_rows").value(d.choice_rows);
  if (d.choice.settings.rule == ThresholdRule::kCost) {
    j.key("cost_fp").value(d.choice.settings.cost_fp);
    j.key("cost_fn").value(d.choice.settings.cost_fn);
    j.key("mean_cost_on_choice_rows").value(d.choice.mean_cost);
  }
  if (d.choice.settings.rule == ThresholdRule::kSensitivity) {
    j.key("target_sensitivity").value(d.choice.settings.target_sensitivity);
  }
  if (d.choice.settings.rule != ThresholdRule::kFixed) {
    j.key("on_choice_rows");
    json_decision(j, d.choice.on_choice_rows);
  }
  j.key("reported_on").value(r.split_name);
  j.key("at_threshold");
  json_decision(j, d.at_threshold);
  j.key("operating_points").begin_array();
  for (const DecisionScores& p : d.operating_points) json_decision(j, p);
  j.end_array();
  j.end_object();
  j.key("precision_recall");
  if (d.precision_recall) {
    j.begin_object();
    j.key("average_precision").value(d.precision_recall->average_precision);
    j.key("thresholds").numbers(d.precision_recall->thresholds);
    j.key("precision").numbers(d.precision_recall->precision);
    j.key("recall").numbers(d.precision_recall->recall);
    j.end_object();
  } else {
    j.null();
  }
  j.key("roc");
  if (d.roc) {
    j.begin_object();
    j.key("area").value(d.roc->area);
    j.key("thresholds").numbers(d.roc->thresholds);
    j.key("false_positive_rate").numbers(d.roc->false_positive_rate);
    j.key("true_positive_rate").numbers(d.roc->true_positive_rate);
    j.end_object();
  } else {
    j.null();
  }
}

}  // namespace credence
