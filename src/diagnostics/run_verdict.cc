// judge_run: the end-of-run checks of run_verdict.h, each with its numbers.
#include "credence/run_verdict.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <optional>
#include <string>

namespace credence {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

VerdictCheck not_applied(std::string name, std::string why) {
  return {std::move(name), CheckOutcome::kNotApplied, kNaN, kNaN, std::move(why)};
}

double mean_of(std::span<const double> x) {
  double sum = 0;
  for (double v : x) sum += v;
  return sum / static_cast<double>(x.size());
}

double variance_of(std::span<const double> x, double mean) {
  double sum = 0;
  for (double v : x) sum += (v - mean) * (v - mean);
  return x.size() > 1 ? sum / static_cast<double>(x.size() - 1) : 0.0;
}

// Variance of a half's mean: its variance over its ESS (the half's length when the ESS
// is undefined, e.g. a constant half).
double mean_variance(std::span<const double> half, double variance) {
  double ess = ess_of(Chains{std::vector<double>(half.begin(), half.end())});
  if (!(ess > 0)) ess = static_cast<double>(half.size());
  return variance / ess;
}

VerdictCheck check_drift(const RunEvidence& e) {
  if (!e.sampler) return not_applied("drift", "optimizer: no kept samples after burn-in to compare");
  double worst_z = kNaN;
  std::string worst;
  int judged = 0;
  for (std::size_t c = 0; c < e.potential.size(); ++c) {
    std::vector<double> trace;
    for (double u : e.potential[c]) {
      if (std::isfinite(u)) trace.push_back(u);
    }
    const std::size_t half = trace.size() / 2;
    if (static_cast<long>(half) < kDriftMinRowsPerHalf) continue;
    ++judged;
    const std::span<const double> first(trace.data(), half);
    const std::span<const double> second(trace.data() + trace.size() - half, half);
    const double m1 = mean_of(first), m2 = mean_of(second);
    const double v1 = variance_of(first, m1), v2 = variance_of(second, m2);
    const double se = std::sqrt(mean_variance(first, v1) + mean_variance(second, v2));
    const double sd = std::sqrt((v1 + v2) / 2);
    const double z = se > 0 ? (m2 - m1) / se : (m1 == m2 ? 0.0 : std::copysign(INFINITY, m2 - m1));
    const double shift = sd > 0 ? std::abs(m2 - m1) / sd : (m1 == m2 ? 0.0 : INFINITY);
    const bool drifting = std::abs(z) > kDriftZ && shift > kDriftShiftSd;
    if (drifting && (worst.empty() || std::abs(z) > std::abs(worst_z))) {
      worst_z = z;
      worst = fmt::format(
          "chain {}: the potential's mean {} from {:.4g} to {:.4g} between the halves of the "
          "trace after burn-in (z = {:.1f}, a shift of {:.2f} trace standard deviations); the "
          "first kept samples are not yet from the stationary distribution: lengthen --burn-in",
          c, m2 < m1 ? "fell" : "rose", m1, m2, z, shift);
    }
    if (worst.empty() && (std::isnan(worst_z) || std::abs(z) > std::abs(worst_z))) worst_z = z;
  }
  if (judged == 0) {
    return not_applied("drift", fmt::format("fewer than {} trace rows per half after burn-in",
                                            kDriftMinRowsPerHalf));
  }
  if (!worst.empty()) return {"drift", CheckOutcome::kFailed, std::abs(worst_z), kDriftZ, worst};
  return {"drift", CheckOutcome::kPassed, std::abs(worst_z), kDriftZ,
          fmt::format("the halves of the potential's trace after burn-in agree in every chain "
                      "(largest |z| {:.1f}, threshold {} with a shift over {} sd)",
                      std::abs(worst_z), kDriftZ, kDriftShiftSd)};
}

// The probe rows' ensemble-mean probability of their own label, grouped by label: the
// largest log-odds sd within a class, the class means' sum, and how far that sum is from a
// constant prediction's (see run_verdict.h, "constant" and "separation").
struct ProbeSeparation {
  std::size_t rows = 0;
  double max_sd = kNaN;          // NaN when no class has two or more probe rows
  double class_mean_sum = 0;
  std::size_t classes = 0;       // labels with at least one probe row
  double index = kNaN;           // (class_mean_sum - 1) / (classes - 1); NaN: unknown
};

ProbeSeparation probe_separation(const RunEvidence& e) {
  ProbeSeparation out;
  out.rows = e.probe_prob.size();
  if (e.probe_labels.size() != out.rows || out.rows < 2) return out;
  std::map<std::int32_t, std::vector<double>> by_class;
  for (std::size_t r = 0; r < out.rows; ++r) {
    double sum = 0;
    long count = 0;
    for (const auto& chain : e.probe_prob[r]) {
      for (double p : chain) {
        if (std::isfinite(p)) sum += p, ++count;
      }
    }
    if (count > 0) by_class[e.probe_labels[r]].push_back(sum / static_cast<double>(count));
  }
  for (const auto& [label, probs] : by_class) {
    out.class_mean_sum += mean_of(probs);
    if (probs.size() < 2) continue;
    std::vector<double> log_odds;
    for (double p : probs) {
      const double q = std::clamp(p, 1e-9, 1 - 1e-9);
      log_odds.push_back(std::log(q) - std::log1p(-q));
    }
    const double sd = std::sqrt(variance_of(log_odds, mean_of(log_odds)));
    out.max_sd = std::isnan(out.max_sd) ? sd : std::max(out.max_sd, sd);
  }
  out.classes = by_class.size();
  if (out.classes >= 2) {
    out.index = (out.class_mean_sum - 1) / static_cast<double>(out.classes - 1);
  }
  return out;
}

// pinned and collapsed read the weights' size; small weights are harmless while the
// predictions still tell the classes apart (a relu network keeps its function when one
// layer shrinks and the next grows). Empty when the alarm stands.
std::optional<std::string> still_separates(const RunEvidence& e) {
  const ProbeSeparation s = probe_separation(e);
  if (s.classes >= 2) {
    if (!(s.index >= kSmallWeightsSeparation)) return std::nullopt;
    return fmt::format("the predictions still tell the classes apart (separation {:.2f} on the "
                       "{} probe rows, at least {})", s.index, s.rows, kSmallWeightsSeparation);
  }
  // Probe rows of one class (a rare class can miss a small validation split): no
  // separation to read, but a collapsing network also stops varying from row to row.
  if (s.classes == 1 && s.max_sd >= kSmallWeightsLogOddsSd) {
    return fmt::format("the predictions still vary from row to row (log-odds sd {:.2f} on the "
                       "{} probe rows, all of one class; at least {})", s.max_sd, s.rows,
                       kSmallWeightsLogOddsSd);
  }
  return std::nullopt;
}

VerdictCheck check_constant(const RunEvidence& e) {
  const ProbeSeparation s = probe_separation(e);
  const std::size_t rows = s.rows;
  if (e.probe_labels.size() != rows || rows < 2) {
    return not_applied("constant", "the probe rows' labels are not known here");
  }
  const double max_sd = s.max_sd;
  const double class_mean_sum = s.class_mean_sum;
  if (std::isnan(max_sd)) return not_applied("constant", "no class has two or more probe rows");
  if (max_sd < kConstantLogOddsSd && class_mean_sum <= 1 + kConstantSumSlack) {
    return {"constant", CheckOutcome::kFailed, max_sd, kConstantLogOddsSd,
            fmt::format("predictions are nearly the same for every one of the {} probe rows "
                        "(log-odds sd within a class at most {:.3f} < {}; the classes' mean "
                        "probabilities of their own label sum to {:.3f}, as a constant "
                        "prediction gives): the network has not learned from the inputs",
                        rows, max_sd, kConstantLogOddsSd, class_mean_sum)};
  }
  return {"constant", CheckOutcome::kPassed, max_sd, kConstantLogOddsSd,
          fmt::format("predictions vary across the {} probe rows (largest log-odds sd within a "
                      "class {:.3f}; own-label class means sum to {:.3f})",
                      rows, max_sd, class_mean_sum)};
}

VerdictCheck check_pinned(const RunEvidence& e) {
  if (e.sampler) return not_applied("pinned", "samplers draw weights from the posterior, not its mode");
  if (!e.layer_weight_precision.empty()) {
    return not_applied("pinned", "the prior's scale is learned; the collapsed check reads it");
  }
  if (e.layer_prior_weight_sq_norm.size() != e.layer_weight_sq_norm.size() ||
      e.layer_weight_sq_norm.empty()) {
    return not_applied("pinned", "the prior's scale is not fixed in this run");
  }
  double smallest = kNaN;
  std::size_t at = 0;
  for (std::size_t l = 0; l < e.layer_weight_sq_norm.size(); ++l) {
    if (!std::isfinite(e.layer_weight_sq_norm[l]) || !(e.layer_prior_weight_sq_norm[l] > 0)) continue;
    const double ratio = e.layer_weight_sq_norm[l] / e.layer_prior_weight_sq_norm[l];
    if (std::isnan(smallest) || ratio < smallest) smallest = ratio, at = l;
  }
  if (std::isnan(smallest)) return not_applied("pinned", "no finite layer norms");
  if (smallest < kPinnedNormRatio) {
    if (std::optional<std::string> fine = still_separates(e)) {
      return {"pinned", CheckOutcome::kPassed, smallest, kPinnedNormRatio,
              fmt::format("layer {}'s squared weight norm is {:.2g} of what its prior expects, but "
                          "{}", at + 1, smallest, *fine)};
    }
    return {"pinned", CheckOutcome::kFailed, smallest, kPinnedNormRatio,
            fmt::format("layer {}'s squared weight norm is {:.2g} of what its prior expects "
                        "(root-mean-square weight {:.2g} of the prior's sd, below {:.2g}): the prior "
                        "has pinned the weights near zero; raise --prior-scale or give more rows",
                        at + 1, smallest, std::sqrt(smallest), std::sqrt(kPinnedNormRatio))};
  }
  return {"pinned", CheckOutcome::kPassed, smallest, kPinnedNormRatio,
          fmt::format("every layer's squared weight norm is at least {:.2g} of its prior expectation "
                      "(threshold {})", smallest, kPinnedNormRatio)};
}

VerdictCheck check_collapsed(const RunEvidence& e) {
  if (e.sampler) return not_applied("collapsed", "samplers draw the precisions from their conditional, uncapped");
  const std::size_t layers = e.layer_weight_precision.size();
  if (layers == 0 || e.layer_weight_precision_cap.size() != layers ||
      e.layer_weight_sq_norm.size() != layers || e.layer_prior_weight_sq_norm.size() != layers) {
    return not_applied("collapsed", "the prior's scale is not learned in this run");
  }
  double smallest = kNaN;  // weight norm over its prior expectation, among capped layers
  std::size_t at = 0;
  int capped = 0;
  for (std::size_t l = 0; l < layers; ++l) {
    if (!(e.layer_weight_precision_cap[l] > 0) || !(e.layer_prior_weight_sq_norm[l] > 0)) continue;
    if (!(e.layer_weight_precision[l] >= kCollapsedCapRatio * e.layer_weight_precision_cap[l])) continue;
    ++capped;
    const double ratio = e.layer_weight_sq_norm[l] / e.layer_prior_weight_sq_norm[l];
    if (std::isfinite(ratio) && (std::isnan(smallest) || ratio < smallest)) smallest = ratio, at = l;
  }
  if (capped == 0) {
    return {"collapsed", CheckOutcome::kPassed, kNaN, kCollapsedNormRatio,
            "no layer's learned weight precision is at its cap"};
  }
  if (!std::isnan(smallest) && smallest < kCollapsedNormRatio) {
    if (std::optional<std::string> fine = still_separates(e)) {
      return {"collapsed", CheckOutcome::kPassed, smallest, kCollapsedNormRatio,
              fmt::format("layer {}'s learned weight precision is at its cap and its squared "
                          "weight norm {:.2g} of that prior's expectation, but {}",
                          at + 1, smallest, *fine)};
    }
    return {"collapsed", CheckOutcome::kFailed, smallest, kCollapsedNormRatio,
            fmt::format("layer {}'s learned weight precision {:.4g} is at its cap {:.4g} (the fixed "
                        "prior's) and its squared weight norm is {:.2g} of what that prior expects "
                        "(below {}): the evidence asks for weights nearer zero still, so the network "
                        "is collapsing towards constant predictions; give more rows, a smaller net, "
                        "or compare with a sampler",
                        at + 1, e.layer_weight_precision[at], e.layer_weight_precision_cap[at],
                        smallest, kCollapsedNormRatio)};
  }
  return {"collapsed", CheckOutcome::kPassed, smallest, kCollapsedNormRatio,
          fmt::format("{} layer(s) at the precision cap, but their weights keep at least {:.2g} of "
                      "the prior's expected squared norm (threshold {})",
                      capped, smallest, kCollapsedNormRatio)};
}

// Function-space summaries: the probe log-likelihood, each probe row, each layer norm.
struct Agreement {
  double max_rhat = kNaN;
  std::string worst;
  double min_ess = kNaN;
  long draws = -1;  // shortest common chain length seen
};

void add_summary(Agreement& a, const Chains& chains, const std::string& name) {
  const ScalarDiagnostics d = diagnose_scalar(chains);
  a.draws = a.draws < 0 ? d.draws_per_chain : std::min(a.draws, d.draws_per_chain);
  if (d.rhat && !std::isnan(*d.rhat) && (std::isnan(a.max_rhat) || *d.rhat > a.max_rhat)) {
    a.max_rhat = *d.rhat;
    a.worst = name;
  }
  if (!std::isnan(d.ess_bulk)) a.min_ess = std::isnan(a.min_ess) ? d.ess_bulk : std::min(a.min_ess, d.ess_bulk);
}

VerdictCheck agreement_check(const char* name, const Agreement& a, const RunEvidence& e,
                             const char* what) {
  if (!e.sampler) return not_applied(name, "optimizer restarts are not draws from one posterior");
  if (e.chains < 2) return not_applied(name, "one chain: R-hat needs two or more");
  if (std::isnan(a.max_rhat)) return not_applied(name, "too few kept samples, or constant summaries");
  if (a.max_rhat > kRhatThreshold) {
    return {name, CheckOutcome::kFailed, a.max_rhat, kRhatThreshold,
            fmt::format("the chains disagree on {}: R-hat {:.3f} on {} (above {})", what,
                        a.max_rhat, a.worst, kRhatThreshold)};
  }
  return {name, CheckOutcome::kPassed, a.max_rhat, kRhatThreshold,
          fmt::format("the chains agree on {}: worst R-hat {:.3f} <= {}", what, a.max_rhat,
                      kRhatThreshold)};
}

VerdictCheck check_mixing(const RunEvidence& e, const Agreement& predictions,
                          const Agreement& scale, std::optional<std::int64_t>& more_steps) {
  if (!e.sampler) return not_applied("mixing", "optimizer: one kept point per restart");
  double ess = predictions.min_ess;
  if (!std::isnan(scale.min_ess)) ess = std::isnan(ess) ? scale.min_ess : std::min(ess, scale.min_ess);
  const long draws = std::max(0L, predictions.draws);
  const double target = kEssPerChainThreshold * std::max(1, e.chains);
  if (draws < 4 || std::isnan(ess)) {
    return {"mixing", CheckOutcome::kFailed, ess, target,
            fmt::format("only {} kept samples per chain: too few to measure mixing; keep more "
                        "samples", draws)};
  }
  if (ess >= target) {
    return {"mixing", CheckOutcome::kPassed, ess, target,
            fmt::format("smallest bulk-ESS {:.0f} reaches the target {:.0f} ({} per chain)", ess,
                        target, kEssPerChainThreshold)};
  }
  // ESS grows about linearly with the steps run after burn-in at a fixed thinning.
  const double steps = static_cast<double>(draws) * static_cast<double>(std::max<std::int64_t>(1, e.thin));
  const double rate = ess / steps;
  more_steps = static_cast<std::int64_t>(std::ceil((target - ess) / std::max(rate, 1e-300)));
  // Few draws make the ESS, and so the rate, unstable (diagnostics.h).
  const std::string rough =
      draws / 2 < kMinDrawsPerSplitChain
          ? fmt::format(" (a rough figure: {} kept samples per chain, under {} per half-chain)",
                        draws, kMinDrawsPerSplitChain)
          : "";
  return {"mixing", CheckOutcome::kFailed, ess, target,
          fmt::format("NOT mixed: smallest bulk-ESS {:.0f} of the target {:.0f} ({} per chain) "
                      "after {:.0f} steps per chain past burn-in ({:.3g} ESS per step); at this "
                      "rate about {} more steps per chain ({} more kept samples at thin {}) "
                      "reach it{}",
                      ess, target, kEssPerChainThreshold, steps, rate, *more_steps,
                      (*more_steps + e.thin - 1) / std::max<std::int64_t>(1, e.thin), e.thin, rough)};
}

}  // namespace

std::string_view check_outcome_name(CheckOutcome outcome) {
  switch (outcome) {
    case CheckOutcome::kPassed: return "ok";
    case CheckOutcome::kFailed: return "FAILED";
    case CheckOutcome::kNotApplied: return "n/a";
  }
  return "?";
}

bool RunVerdict::done() const {
  return std::none_of(checks.begin(), checks.end(),
                      [](const VerdictCheck& c) { return c.outcome == CheckOutcome::kFailed; });
}

const VerdictCheck* RunVerdict::find(std::string_view name) const {
  for (const VerdictCheck& c : checks) {
    if (c.name == name) return &c;
  }
  return nullptr;
}

RunVerdict judge_run(const RunEvidence& e) {
  Agreement predictions, scale;
  if (e.sampler) {
    add_summary(predictions, e.probe_log_lik, "probe_log_lik");
    for (std::size_t r = 0; r < e.probe_prob.size(); ++r) {
      add_summary(predictions, e.probe_prob[r], fmt::format("probe_prob[{}]", r));
    }
    for (std::size_t l = 0; l < e.layer_sq_norm.size(); ++l) {
      add_summary(scale, e.layer_sq_norm[l], fmt::format("layer_sq_norm[{}]", l));
    }
  }
  RunVerdict v;
  v.checks.push_back(check_drift(e));
  v.checks.push_back(check_constant(e));
  v.checks.push_back(check_pinned(e));
  v.checks.push_back(check_mixing(e, predictions, scale, v.more_steps_per_chain));
  v.checks.push_back(agreement_check("predictions", predictions, e, "their predictions (probe rows)"));
  v.checks.push_back(agreement_check("scale", scale, e, "the layers' weight scales (squared norms)"));
  v.checks.push_back(check_collapsed(e));
  std::string failed;
  for (const VerdictCheck& c : v.checks) {
    if (c.outcome == CheckOutcome::kFailed) failed += (failed.empty() ? "" : ", ") + c.name;
  }
  v.headline = failed.empty() ? "passed every check" : "NOT done: " + failed;
  if (v.more_steps_per_chain) {
    v.headline += fmt::format(" (about {} more steps per chain reach the ESS target)", *v.more_steps_per_chain);
  }
  return v;
}

std::vector<std::string> verdict_lines(const RunVerdict& verdict, bool all) {
  std::vector<std::string> lines{verdict.headline};
  for (const VerdictCheck& c : verdict.checks) {
    if (all || c.outcome == CheckOutcome::kFailed) {
      lines.push_back(fmt::format("  {} [{}]: {}", c.name, check_outcome_name(c.outcome), c.message));
    }
  }
  return lines;
}

}  // namespace credence
