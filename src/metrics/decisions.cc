// Decisions at a threshold on the positive class's probability, and the rules that choose it.
#include <fmt/format.h>

#include <cassert>
#include <cmath>
#include <limits>

#include "credence/metrics.h"
#include "metrics/cumulative.h"

namespace credence {
namespace {

double ratio(std::int64_t num, std::int64_t den) {
  return den == 0 ? std::numeric_limits<double>::quiet_NaN()
                  : static_cast<double>(num) / static_cast<double>(den);
}

Status check_settings(const ThresholdSettings& s) {
  switch (s.rule) {
    case ThresholdRule::kFixed:
      if (!(s.threshold > 0 && s.threshold < 1)) {
        return Status::invalid_input(fmt::format(
            "threshold {}: give a probability strictly between 0 and 1, e.g. 0.5", s.threshold));
      }
      break;
    case ThresholdRule::kCost:
      if (!(s.cost_fp > 0 && std::isfinite(s.cost_fp) && s.cost_fn > 0 &&
            std::isfinite(s.cost_fn))) {
        return Status::invalid_input(fmt::format(
            "costs {} (false positive) and {} (false negative): give two positive numbers",
            s.cost_fp, s.cost_fn));
      }
      break;
    case ThresholdRule::kSensitivity:
      if (!(s.target_sensitivity > 0 && s.target_sensitivity <= 1)) {
        return Status::invalid_input(fmt::format(
            "target sensitivity {}: give a fraction in (0, 1], e.g. 0.9", s.target_sensitivity));
      }
      break;
  }
  return Status::ok_status();
}

// The threshold of cut k (the k highest distinct values called positive): halfway to
// the neighbouring values, so new rows are decided by the nearer validation value.
double cut_threshold(const std::vector<double>& values, std::size_t k) {
  if (k == 0) return values.front() < 1 ? 0.5 * (values.front() + 1) : 1.0;
  if (k == values.size()) return 0.5 * values.back();
  return 0.5 * (values[k - 1] + values[k]);
}

}  // namespace

PositiveScores positive_scores(ProbsRef probs, LabelSpan labels, int positive_class) {
  assert(positive_class >= 0 && positive_class < probs.rows());
  assert(static_cast<std::size_t>(probs.cols()) == labels.size());
  PositiveScores s;
  s.q.resize(labels.size());
  s.positive.resize(labels.size());
  for (std::size_t i = 0; i < labels.size(); ++i) {
    s.q[i] = probs(positive_class, static_cast<Eigen::Index>(i));
    s.positive[i] = labels[i] == positive_class ? 1 : 0;
  }
  return s;
}

std::string_view threshold_rule_name(ThresholdRule rule) {
  switch (rule) {
    case ThresholdRule::kCost: return "cost";
    case ThresholdRule::kSensitivity: return "sensitivity";
    default: return "fixed";
  }
}

// Sensitivity, specificity, PPV, NPV and F1 from the 2x2 table (their textbook
// definitions; F1 is the harmonic mean of PPV and sensitivity).
DecisionScores decide_at(std::span<const double> q, std::span<const std::uint8_t> positive,
                         double threshold) {
  assert(q.size() == positive.size());
  DecisionScores d;
  d.threshold = threshold;
  ConfusionCounts& c = d.counts;
  for (std::size_t i = 0; i < q.size(); ++i) {
    const bool called = q[i] >= threshold;
    if (positive[i] != 0) {
      (called ? c.true_positive : c.false_negative) += 1;
    } else {
      (called ? c.false_positive : c.true_negative) += 1;
    }
  }
  d.sensitivity = ratio(c.true_positive, c.true_positive + c.false_negative);
  d.specificity = ratio(c.true_negative, c.true_negative + c.false_positive);
  d.ppv = ratio(c.true_positive, c.true_positive + c.false_positive);
  d.npv = ratio(c.true_negative, c.true_negative + c.false_negative);
  d.f1 = ratio(2 * c.true_positive, 2 * c.true_positive + c.false_positive + c.false_negative);
  return d;
}

Result<ThresholdChoice> choose_threshold(std::span<const double> q,
                                         std::span<const std::uint8_t> positive,
                                         const ThresholdSettings& settings) {
  CREDENCE_RETURN_IF_ERROR(check_settings(settings));
  ThresholdChoice choice;
  choice.settings = settings;
  if (settings.rule == ThresholdRule::kFixed) {
    choice.threshold = settings.threshold;
  } else {
    if (q.empty()) {
      return Status::invalid_input(
          "choosing a threshold needs labelled validation rows, and there are none; train "
          "with a validation split or give a fixed threshold");
    }
    const Cumulative c = cumulate(q, positive);
    const double total_positive = c.tp.back();
    std::size_t best = 0;  // cut k: the k highest distinct values are called positive
    if (settings.rule == ThresholdRule::kCost) {
      // Cost of cut k: cost_fp FP_k + cost_fn (P - TP_k); cut 0 calls nothing positive.
      double best_cost = settings.cost_fn * total_positive;
      for (std::size_t k = 1; k <= c.tp.size(); ++k) {
        const double cost =
            settings.cost_fp * c.fp[k - 1] + settings.cost_fn * (total_positive - c.tp[k - 1]);
        if (cost < best_cost) {
          best_cost = cost;
          best = k;
        }
      }
    } else {
      if (total_positive == 0) {
        return Status::invalid_input(
            "choosing a threshold for a target sensitivity needs positive rows among the "
            "validation rows, and there are none");
      }
      best = c.tp.size();
      for (std::size_t k = 1; k <= c.tp.size(); ++k) {
        if (c.tp[k - 1] / total_positive >= settings.target_sensitivity) {
          best = k;
          break;
        }
      }
    }
    choice.threshold = cut_threshold(c.thresholds, best);
  }
  choice.on_choice_rows = decide_at(q, positive, choice.threshold);
  const ConfusionCounts& n = choice.on_choice_rows.counts;
  if (!q.empty()) {
    choice.mean_cost = (settings.cost_fp * static_cast<double>(n.false_positive) +
                        settings.cost_fn * static_cast<double>(n.false_negative)) /
                       static_cast<double>(q.size());
  }
  return choice;
}

Result<DecisionReport> report_decisions(const PositiveScores& scored,
                                        const PositiveScores* choice,
                                        const ThresholdSettings& settings) {
  if (settings.rule != ThresholdRule::kFixed && choice == nullptr) {
    return Status::invalid_input(fmt::format(
        "the {} rule chooses a threshold on the run's validation rows, and none are at hand; "
        "give the run's own data file, or a fixed threshold",
        threshold_rule_name(settings.rule)));
  }
  DecisionReport report;
  const PositiveScores none;
  const PositiveScores& on = settings.rule == ThresholdRule::kFixed || choice == nullptr ? none
                                                                                         : *choice;
  Result<ThresholdChoice> chosen = choose_threshold(on.q, on.positive, settings);
  if (!chosen.ok()) return chosen.status();
  report.choice = *chosen;
  report.choice_rows = static_cast<std::int64_t>(on.q.size());
  report.at_threshold = decide_at(scored.q, scored.positive, report.choice.threshold);
  for (int t = 1; t <= 9; ++t) {
    report.operating_points.push_back(decide_at(scored.q, scored.positive, t / 10.0));
  }
  report.precision_recall = precision_recall_curve(scored.q, scored.positive);
  report.roc = roc_curve(scored.q, scored.positive);
  return report;
}

}  // namespace credence
