// diagnose_run: R-hat and ESS of a run file's tracked summaries, grouped by chain.
#include "credence/run_diagnostics.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <variant>

#include "diagnostics/run_columns.h"

namespace credence {
namespace {

using diagnostics::chains_of;
using diagnostics::chains_of_row;
using diagnostics::columns_by_chain;
using diagnostics::setting;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// What the mean speed ratio says about the mass (docs/methods.md 5.2 table and 5.6-5.7): the
// default target is E|v|/c = 0.5; near 1 every coordinate moves at the speed cap.
std::string speed_note(std::string_view method, double mean_ratio) {
  if (std::isnan(mean_ratio)) return "no speed ratio was recorded after burn-in";
  if (method == "rsgd") {
    return mean_ratio > 0.8
               ? "mean |v|/c near 1: most weights move at the cap eps c (sign-descent regime); "
                 "raise c if steps are too short"
               : "mean |v|/c below the cap: momentum-SGD regime; the speed bound acts as clipping only";
  }
  if (mean_ratio > 0.8) {
    return "mean |v|/c near 1 (ultra-relativistic): momenta thermalise slowly; raise the mass "
           "(--mass) or lengthen burn-in";
  }
  if (mean_ratio < 0.2) {
    return "mean |v|/c near 0 (nearly Newtonian): the speed bound rarely acts; a smaller mass "
           "moves closer to the usual target 0.5";
  }
  return "mean |v|/c within 0.2-0.8 of the usual target 0.5: the mass setting looks reasonable";
}

void finish_summary(SummaryDiagnostics& s, double seconds, double grads, double ess_threshold) {
  s.ess_per_second = seconds > 0 ? s.stats.ess_bulk / seconds : kNaN;
  s.ess_per_1000_grads = grads > 0 ? 1000 * s.stats.ess_bulk / grads : kNaN;
  // Projections are not symmetry-invariant: chains in equivalent modes disagree on them
  // by construction, so only their within-chain ESS is judged.
  s.flag_rhat = s.group != SummaryGroup::kProjection && s.stats.rhat.has_value() &&
                *s.stats.rhat > kRhatThreshold;  // +inf flags too
  s.flag_ess = !std::isnan(s.stats.ess_bulk) && s.stats.ess_bulk < ess_threshold;
  s.flag_ess_tail = !std::isnan(s.stats.ess_tail) && s.stats.ess_tail < ess_threshold;
}

}  // namespace

std::string_view summary_group_name(SummaryGroup group) {
  switch (group) {
    case SummaryGroup::kProbeLogLik: return "probe_log_lik";
    case SummaryGroup::kProbeProb: return "probe_prob";
    case SummaryGroup::kLayerSqNorm: return "layer_sq_norm";
    case SummaryGroup::kProjection: return "projection";
    case SummaryGroup::kPotential: return "potential";
  }
  return "unknown";
}

std::string_view mixing_verdict_name(MixingVerdict verdict) {
  switch (verdict) {
    case MixingVerdict::kMixed: return "mixed";
    case MixingVerdict::kNotMixed: return "not_mixed";
    case MixingVerdict::kSingleChain: return "single_chain";
    case MixingVerdict::kNotEnoughDraws: return "not_enough_draws";
  }
  return "unknown";
}

Result<RunDiagnostics> diagnose_run(const RunReader& run) {
  const RunHeader& header = run.header();
  const RunSummary& summary = run.summary();
  RunDiagnostics d;
  d.method = setting<std::string>(header.settings, "method").value_or("unknown");
  d.chains = header.chains;
  d.kept_per_chain = summary.kept_per_chain;
  d.thin = setting<std::int64_t>(header.settings, "thin");
  d.burn_in = setting<std::int64_t>(header.settings, "burn_in");
  d.ess_threshold = kEssPerChainThreshold * std::max(1, d.chains);
  if (summary.samples == 0) {
    return Status::invalid_input("the run holds no committed samples yet; train longer, then diagnose");
  }

  Result<std::vector<std::int32_t>> chain_of = run.sample_chains();
  if (!chain_of.ok()) return chain_of.status();
  Result<std::vector<std::int64_t>> index_of = run.sample_indices();
  if (!index_of.ok()) return index_of.status();
  const auto columns = columns_by_chain(d.chains, *chain_of, *index_of);
  std::size_t shortest = columns.empty() ? 0 : columns[0].size();
  bool differed = false;
  for (const auto& list : columns) {
    differed = differed || list.size() != columns[0].size();
    shortest = std::min(shortest, list.size());
  }
  d.draws_per_chain = static_cast<long>(shortest);
  if (differed) {
    d.notes.push_back(fmt::format("chains kept different numbers of samples; the first {} of each are used",
                                  shortest));
  }
  if (d.thin && *d.thin > 1) {
    d.notes.push_back(fmt::format("thinning factor {} (one step in {} kept): ESS counts kept "
                                  "samples; thinning loses information but adds no bias",
                                  *d.thin, *d.thin));
  }

  // Sampling cost summed over chains, for ESS per second and per 1000 gradients.
  double seconds = std::accumulate(summary.seconds_per_chain.begin(), summary.seconds_per_chain.end(), 0.0);
  double grads = 0;
  for (std::int64_t g : summary.gradient_evals_per_chain) grads += static_cast<double>(g);
  if (summary.seconds_per_chain.empty() || summary.gradient_evals_per_chain.empty()) {
    d.notes.push_back("the run file does not record sampling time or gradient counts: ESS rates are absent");
  }

  auto add = [&](SummaryGroup group, int index, Chains chains) {
    SummaryDiagnostics s;
    s.group = group;
    s.index = index;
    s.name = index < 0 ? std::string(summary_group_name(group))
                       : fmt::format("{}[{}]", summary_group_name(group), index);
    s.in_verdict = group == SummaryGroup::kProbeLogLik || group == SummaryGroup::kProbeProb ||
                   group == SummaryGroup::kLayerSqNorm;
    s.stats = diagnose_scalar(chains);
    finish_summary(s, seconds, grads, d.ess_threshold);
    d.summaries.push_back(std::move(s));
  };

  Result<std::vector<double>> log_lik = run.probe_log_lik();
  if (!log_lik.ok()) return log_lik.status();
  add(SummaryGroup::kProbeLogLik, -1, chains_of(*log_lik, columns));
  const std::pair<SummaryGroup, Result<Eigen::MatrixXf> (RunReader::*)() const> matrices[] = {
      {SummaryGroup::kProbeProb, &RunReader::probe_prob},
      {SummaryGroup::kLayerSqNorm, &RunReader::layer_sq_norms},
      {SummaryGroup::kProjection, &RunReader::projections}};
  for (const auto& [group, read] : matrices) {
    Result<Eigen::MatrixXf> values = (run.*read)();
    if (!values.ok()) return values.status();
    for (Eigen::Index r = 0; r < values->rows(); ++r) {
      add(group, static_cast<int>(r), chains_of_row(*values, r, columns));
    }
  }

  // Potential and speed ratio from the traces, rows after burn-in only.
  const std::int64_t burn_in = d.burn_in.value_or(0);
  const bool relativistic = d.method == "rsghmc" || d.method == "rhmc" || d.method == "rsgd";
  const bool metropolis = d.method == "hmc" || d.method == "rhmc";
  Chains potential;
  for (int c = 0; c < d.chains; ++c) {
    Result<std::vector<TraceRecord>> trace = run.traces(c);
    if (!trace.ok()) return trace.status();
    std::vector<double> chain;
    double speed_sum = 0, accept_sum = 0;
    int speed_count = 0, accept_count = 0;
    for (const TraceRecord& row : *trace) {
      if (row.step <= burn_in) continue;
      chain.push_back(row.potential);
      if (!std::isnan(row.speed_ratio)) {
        speed_sum += row.speed_ratio;
        ++speed_count;
      }
      if (!std::isnan(row.acceptance)) {
        accept_sum += row.acceptance;
        ++accept_count;
      }
    }
    potential.push_back(std::move(chain));
    if (relativistic) d.speed_ratio_per_chain.push_back(speed_count ? speed_sum / speed_count : kNaN);
    if (metropolis) d.acceptance_per_chain.push_back(accept_count ? accept_sum / accept_count : kNaN);
  }
  add(SummaryGroup::kPotential, -1, std::move(potential));
  if (relativistic) {
    double sum = 0;
    int count = 0;
    for (double r : d.speed_ratio_per_chain) {
      if (!std::isnan(r)) sum += r, ++count;
    }
    d.speed_note = speed_note(d.method, count ? sum / count : kNaN);
  }

  // The verdict: function-space summaries only.
  d.max_rhat = kNaN;
  d.min_ess_bulk = kNaN;
  d.min_ess_tail = kNaN;
  bool any_ess = false;
  for (const SummaryDiagnostics& s : d.summaries) {
    if (!s.in_verdict) continue;
    if (s.stats.rhat && !std::isnan(*s.stats.rhat)) d.max_rhat = std::isnan(d.max_rhat) ? *s.stats.rhat : std::max(d.max_rhat, *s.stats.rhat);
    if (!std::isnan(s.stats.ess_bulk)) {
      any_ess = true;
      d.min_ess_bulk = std::isnan(d.min_ess_bulk) ? s.stats.ess_bulk : std::min(d.min_ess_bulk, s.stats.ess_bulk);
    }
    if (!std::isnan(s.stats.ess_tail)) d.min_ess_tail = std::isnan(d.min_ess_tail) ? s.stats.ess_tail : std::min(d.min_ess_tail, s.stats.ess_tail);
    if (s.flag_rhat || s.flag_ess || s.flag_ess_tail) ++d.flagged;
  }
  if (shortest < 4 || !any_ess) {
    d.verdict = MixingVerdict::kNotEnoughDraws;
  } else if (d.flagged > 0) {
    d.verdict = MixingVerdict::kNotMixed;
  } else {
    d.verdict = d.chains < 2 ? MixingVerdict::kSingleChain : MixingVerdict::kMixed;
  }
  if (static_cast<long>(shortest) / 2 < kMinDrawsPerSplitChain) {
    d.notes.push_back(fmt::format("only {} draws per split chain (fewer than {}): estimates are unstable; keep more samples",
                                  shortest / 2, kMinDrawsPerSplitChain));
  }
  if (d.chains < 2) d.notes.push_back("R-hat needs two or more chains; only ESS is reported");
  return d;
}

}  // namespace credence
