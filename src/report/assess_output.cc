// Text and JSON renderings of an assessment. Names of the JSON keys: docs/assess-json.md.
#include "report/assess_output.h"

#include <fmt/format.h>

#include <cmath>
#include <iterator>

#include "report/decision_output.h"
#include "util/json.h"
#include "credence/html_report.h"
#include "credence/plot.h"

namespace credence {
namespace {

std::string_view binning_name(Binning b) { return b == Binning::kEqualWidth ? "width" : "mass"; }
std::string_view binning_words(Binning b) {
  return b == Binning::kEqualWidth ? "equal width" : "equal mass";
}

const ReliabilityTable& headline_table(const Assessment& a, Binning b) {
  return b == Binning::kEqualWidth ? a.width_bins : a.mass_bins;
}

std::string num(double v, int digits = 4) {
  return std::isfinite(v) ? fmt::format("{:.{}f}", v, digits) : "-";
}

std::string interval(const std::optional<BootstrapIntervals>& intervals, Interval BootstrapIntervals::*which) {
  if (!intervals) return "";
  const Interval& i = (*intervals).*which;
  return fmt::format("[{}, {}]", num(i.lo), num(i.hi));
}

std::string member_cell(const std::vector<MemberScores>& members, double MemberScores::*score) {
  if (members.size() < 2) return "";
  const MeanSd m = member_mean_sd(members, score);
  return fmt::format("{} ± {}", num(m.mean), num(m.sd));
}

void metrics_block(std::string& out, const ScoredEnsemble& s, Binning binning, int bins,
                   const std::string& positive) {
  auto o = std::back_inserter(out);
  const Assessment& a = s.metrics;
  const bool ensemble = s.members.size() >= 2;
  fmt::format_to(o, "  {:<30}{:>10}  {:<20}{}\n", "metric", ensemble ? "ensemble" : "value",
                 a.intervals ? "95% interval" : "", ensemble ? "one sample (mean ± sd)" : "");
  auto row = [&](std::string_view name, double v, std::string iv, std::string member) {
    fmt::format_to(o, "  {:<30}{:>10}  {:<20}{}\n", name, num(v), iv, member);
  };
  row("accuracy", a.accuracy, "", member_cell(s.members, &MemberScores::accuracy));
  row("nll (nats)", a.nll, interval(a.intervals, &BootstrapIntervals::nll),
      member_cell(s.members, &MemberScores::nll));
  row("brier", a.brier, interval(a.intervals, &BootstrapIntervals::brier),
      member_cell(s.members, &MemberScores::brier));
  if (a.brier_binary) {
    row(positive.empty() ? "brier (positive class)" : fmt::format("brier of P({})", positive),
        *a.brier_binary, "", "");
  }
  const std::string ece_name = fmt::format("ece ({}, {} bins)", binning_words(binning), bins);
  const ReliabilityTable& head = headline_table(a, binning);
  row(ece_name, head.ece, interval(a.intervals, &BootstrapIntervals::ece),
      binning == Binning::kEqualWidth ? member_cell(s.members, &MemberScores::ece) : "");
  const ReliabilityTable& other =
      binning == Binning::kEqualWidth ? a.mass_bins : a.width_bins;
  row(fmt::format("ece ({})", binning_words(other.binning)), other.ece, "",
      binning == Binning::kEqualMass ? member_cell(s.members, &MemberScores::ece) : "");
  row(fmt::format("mce ({})", binning_words(binning)), head.mce, "", "");
  row("classwise ece", a.classwise_ece, "", "");
  if (a.class_auroc.macro) {
    row(a.classes == 2 ? "auroc" : "auroc (one-vs-rest macro)", *a.class_auroc.macro, "", "");
  }
  if (a.misclassification_auroc) {
    row("auroc, right vs wrong", *a.misclassification_auroc, "", "");
  }
  if (s.truth) {
    row("kl from truth (nats)", s.truth->kl, "", "");
    row("abs probability error", s.truth->mae, "", "");
    row("nll of the truth", s.truth->truth_nll, "", "");
  }
}

void reliability_block(std::string& out, const ReliabilityTable& t) {
  auto o = std::back_inserter(out);
  fmt::format_to(o, "\nreliability ({}, {} bins; confidence = probability of the predicted class)\n",
                 binning_words(t.binning), t.bins);
  fmt::format_to(o, "  {:<15}{:>7}{:>12}{:>10}{:>9}\n", "confidence", "rows", "mean conf",
                 "accuracy", "gap");
  for (const ReliabilityBin& b : t.rows) {
    if (b.count == 0) continue;
    fmt::format_to(o, "  {:<15}{:>7}{:>12}{:>10}{:>+9.3f}\n",
                   fmt::format("{:.3f}-{:.3f}", b.lo, b.hi), b.count, num(b.mean_confidence, 3),
                   num(b.accuracy, 3), b.accuracy - b.mean_confidence);
  }
}

void rejection_block(std::string& out, const Assessment& a) {
  auto o = std::back_inserter(out);
  fmt::format_to(o, "\naccuracy when the most uncertain rows are set aside for a person\n");
  fmt::format_to(o, "  {:<26}{:>8}{:>8}{:>8}{:>8}{:>8}\n", "rows kept", "100%", "90%", "80%",
                 "50%", "aurc");
  auto row = [&](std::string_view name, const RejectionCurve& c) {
    fmt::format_to(o, "  {:<26}{:>8}{:>8}{:>8}{:>8}{:>8}\n", name, num(c.accuracy_at_100, 3),
                   num(c.accuracy_at_90, 3), num(c.accuracy_at_80, 3), num(c.accuracy_at_50, 3),
                   num(c.aurc, 3));
  };
  row("ranked by entropy", a.rejection_by_entropy);
  if (a.rejection_by_mutual_info) row("ranked by mutual info", *a.rejection_by_mutual_info);
  row("ranked by confidence", a.rejection_by_confidence);
}

void uncertainty_block(std::string& out, const ScoredEnsemble& s) {
  const auto n = static_cast<double>(s.split.total.size());
  fmt::format_to(std::back_inserter(out),
                 "\nmean doubt per row (nats): total {} = noise {} + lack of data {}\n",
                 num(s.split.total.sum() / n), num(s.split.expected.sum() / n),
                 num(s.split.mutual_info.sum() / n));
}

// --- JSON ---

const std::string* positive_name(const AssessJobResult& r) {
  return r.positive ? &r.positive->name : nullptr;
}

void json_table(JsonWriter& j, const ReliabilityTable& t) {
  j.begin_object();
  j.key("bins").value(t.bins);
  j.key("ece").value(t.ece);
  j.key("mce").value(t.mce);
  j.key("rows").begin_array();
  for (const ReliabilityBin& b : t.rows) {
    j.begin_object();
    j.key("lo").value(b.lo).key("hi").value(b.hi).key("count").value(b.count);
    j.key("mean_confidence").value(b.mean_confidence).key("accuracy").value(b.accuracy);
    j.end_object();
  }
  j.end_array();
  j.end_object();
}

void json_rejection(JsonWriter& j, const RejectionCurve& c) {
  j.begin_object();
  j.key("accuracy_at_100").value(c.accuracy_at_100);
  j.key("accuracy_at_90").value(c.accuracy_at_90);
  j.key("accuracy_at_80").value(c.accuracy_at_80);
  j.key("accuracy_at_50").value(c.accuracy_at_50);
  j.key("aurc").value(c.aurc);
  j.end_object();
}

void json_scored(JsonWriter& j, const ScoredEnsemble& s, const std::vector<std::string>& classes,
                 Binning binning, const std::string* positive) {
  const Assessment& a = s.metrics;
  j.begin_object();
  j.key("temperature").value(s.temperature);
  j.key("accuracy").value(a.accuracy);
  j.key("nll").value(a.nll);
  j.key("brier").value(a.brier);
  j.key("brier_binary").value_or_null(a.brier_binary);
  const ReliabilityTable& head = headline_table(a, binning);
  j.key("ece").value(head.ece);
  j.key("mce").value(head.mce);
  j.key("ece_width").value(a.width_bins.ece);
  j.key("mce_width").value(a.width_bins.mce);
  j.key("ece_mass").value(a.mass_bins.ece);
  j.key("mce_mass").value(a.mass_bins.mce);
  j.key("classwise_ece").value(a.classwise_ece);
  j.key("auroc").value_or_null(a.class_auroc.macro);
  j.key("auroc_per_class").begin_object();
  for (std::size_t k = 0; k < classes.size(); ++k) {
    j.key(classes[k]).value(a.class_auroc.per_class[k]);
  }
  j.end_object();
  j.key("misclassification_auroc").value_or_null(a.misclassification_auroc);
  if (a.intervals) {
    j.key("intervals").begin_object();
    j.key("level").value(0.95);
    j.key("resamples").value(a.intervals->resamples);
    j.key("nll").numbers(std::vector<double>{a.intervals->nll.lo, a.intervals->nll.hi});
    j.key("brier").numbers(std::vector<double>{a.intervals->brier.lo, a.intervals->brier.hi});
    j.key("ece").numbers(std::vector<double>{a.intervals->ece.lo, a.intervals->ece.hi});
    j.end_object();
  }
  j.key("single_sample").begin_object();
  j.key("samples").value(static_cast<std::int64_t>(s.members.size()));
  for (auto [name, field] : {std::pair{"accuracy", &MemberScores::accuracy},
                             std::pair{"nll", &MemberScores::nll},
                             std::pair{"brier", &MemberScores::brier},
                             std::pair{"ece_width", &MemberScores::ece}}) {
    const MeanSd m = member_mean_sd(s.members, field);
    j.key(name).begin_object().key("mean").value(m.mean).key("sd").value(m.sd).end_object();
  }
  j.end_object();
  const auto n = static_cast<double>(s.split.total.size());
  j.key("uncertainty").begin_object();
  j.key("mean_entropy").value(s.split.total.sum() / n);
  j.key("mean_expected_entropy").value(s.split.expected.sum() / n);
  j.key("mean_mutual_information").value(s.split.mutual_info.sum() / n);
  j.key("clamped_rows").value(s.split.clamped_rows);
  j.end_object();
  j.key("reliability").begin_object();
  j.key("width");
  json_table(j, a.width_bins);
  j.key("mass");
  json_table(j, a.mass_bins);
  j.end_object();
  if (positive) positive_curve_json(j, a, *positive);
  j.key("rejection").begin_object();
  j.key("entropy");
  json_rejection(j, a.rejection_by_entropy);
  if (a.rejection_by_mutual_info) {
    j.key("mutual_information");
    json_rejection(j, *a.rejection_by_mutual_info);
  }
  j.key("confidence");
  json_rejection(j, a.rejection_by_confidence);
  j.end_object();
  if (s.truth) {
    j.key("truth").begin_object();
    j.key("kl").value(s.truth->kl).key("mae").value(s.truth->mae);
    j.key("truth_nll").value(s.truth->truth_nll).key("model_nll").value(s.truth->model_nll);
    j.end_object();
  }
  j.end_object();
}

}  // namespace

std::string assess_text(const AssessJobResult& r, const AssessHeadline& h) {
  std::string out;
  auto o = std::back_inserter(out);
  std::string classes;
  for (const std::string& c : r.class_names) classes += (classes.empty() ? "" : ", ") + c;
  if (r.positive) {
    classes += fmt::format("; positive: {}, {}", r.positive->name, r.positive->chosen_by);
  }
  fmt::format_to(o, "assess {} on {}: {} split, {} rows, {} classes ({}), {} kept sample{}{}\n\n",
                 h.run_path, h.data_path, r.split_name, r.rows.size(), r.class_names.size(),
                 classes, r.samples, r.samples == 1 ? "" : "s",
                 r.scored.temperature != 1.0
                     ? fmt::format(", temperature {:.4g}", r.scored.temperature)
                     : "");
  const int bins = headline_table(r.scored.metrics, h.binning).bins;
  metrics_block(out, r.scored, h.binning, bins, r.positive ? r.positive->name : "");
  uncertainty_block(out, r.scored);
  reliability_block(out, headline_table(r.scored.metrics, h.binning));
  decision_text(out, r);
  rejection_block(out, r.scored.metrics);
  if (r.fit && r.calibrated) {
    fmt::format_to(o,
                   "\ntemperature scaling, fitted on the run's {} validation rows: tau = {:.4g}{} "
                   "(validation nll {} -> {})\n",
                   r.val_rows, r.fit->temperature,
                   r.fit->at_bound ? " (at the search bound)" : "", num(r.fit->nll_before),
                   num(r.fit->nll_after));
    metrics_block(out, *r.calibrated, h.binning, bins, r.positive ? r.positive->name : "");
  }
  fmt::format_to(o, "\n{}\n", cautions_text());
  return out;
}

std::string assess_plot(const AssessJobResult& r, const AssessHeadline& h) {
  ReliabilityChart chart;
  chart.title = fmt::format("Reliability on the {} rows ({}, {} bins)", r.split_name,
                            binning_words(h.binning),
                            headline_table(r.scored.metrics, h.binning).bins);
  chart.series.push_back(
      {r.samples > 1 ? fmt::format("ensemble of {}", r.samples) : std::string("model"),
       headline_table(r.scored.metrics, h.binning)});
  if (r.calibrated) {
    chart.series.push_back({fmt::format("temperature {:.3g}", r.calibrated->temperature),
                            headline_table(r.calibrated->metrics, h.binning)});
  }
  return render_reliability_diagram(chart);
}

std::string assess_json(const AssessJobResult& r, const AssessHeadline& h) {
  JsonWriter j;
  j.begin_object();
  j.key("run").value(h.run_path);
  j.key("data").value(h.data_path);
  j.key("data_sha256").value(r.data_sha256);
  j.key("data_matches_run").value(r.data_matches_run);
  j.key("split").value(r.split_name);
  j.key("rows").value(static_cast<std::int64_t>(r.rows.size()));
  j.key("classes").begin_array();
  for (const std::string& c : r.class_names) j.value(c);
  j.end_array();
  j.key("samples").value(r.samples);
  j.key("binning").value(binning_name(h.binning));
  j.key("metrics");
  json_scored(j, r.scored, r.class_names, h.binning, positive_name(r));
  if (r.fit && r.calibrated) {
    j.key("temperature_scaling").begin_object();
    j.key("temperature").value(r.fit->temperature);
    j.key("fitted_on_rows").value(r.val_rows);
    j.key("validation_nll_before").value(r.fit->nll_before);
    j.key("validation_nll_after").value(r.fit->nll_after);
    j.key("at_bound").value(r.fit->at_bound);
    j.key("metrics");
    json_scored(j, *r.calibrated, r.class_names, h.binning, positive_name(r));
    j.end_object();
  }
  decision_json(j, r);
  j.key("cautions").value(cautions_text());
  j.end_object();
  return j.str();
}

}  // namespace credence
