// `credence diagnose`: do the chains agree? R-hat and ESS of the run's function-space
// summaries (docs/methods.md 10), and how close the draws are to the posterior (kernel
// Stein discrepancy, section 11), as text on stdout and optionally as JSON.
#include <fmt/format.h>

#include <cmath>
#include <cstdio>
#include <limits>
#include <map>

#include "cli/commands.h"
#include "report/diagnose_output.h"
#include "report/precision_output.h"
#include "report/stein_output.h"
#include "report/verdict_output.h"
#include "credence/ensemble.h"
#include "credence/net.h"
#include "credence/run_diagnostics.h"
#include "credence/run_stein.h"
#include "util/atomic_file.h"

namespace credence::cli {
namespace {

struct DiagnoseOptions {
  std::string run_path;
  std::string json_path;
  bool all = false;
  std::string data_path;                     // empty: the run's recorded data file
  std::int64_t ksd_draws = SteinSettings{}.max_draws_per_chain;
};

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string number(double value, int decimals) {
  if (std::isnan(value)) return "-";
  if (std::isinf(value)) return value > 0 ? "inf" : "-inf";
  return fmt::format("{:.{}f}", value, decimals);
}
std::string number(const std::optional<double>& value, int decimals) {
  return value ? number(*value, decimals) : "-";
}

// Worse means a larger R-hat, or with no R-hat (one chain, projections) a smaller bulk-ESS.
bool worse(const SummaryDiagnostics& a, const SummaryDiagnostics& b) {
  const bool within = a.group == SummaryGroup::kProjection;
  const double ra = within ? kNaN : a.stats.rhat.value_or(kNaN);
  const double rb = within ? kNaN : b.stats.rhat.value_or(kNaN);
  if (!std::isnan(ra) || !std::isnan(rb)) {
    if (std::isnan(rb)) return true;
    if (std::isnan(ra)) return false;
    if (ra != rb) return ra > rb;
  }
  if (std::isnan(b.stats.ess_bulk)) return !std::isnan(a.stats.ess_bulk);
  return !std::isnan(a.stats.ess_bulk) && a.stats.ess_bulk < b.stats.ess_bulk;
}

// Projections show no R-hat: they differ between chains in equivalent modes by design.
std::string row(const std::string& label, const SummaryDiagnostics& s, const std::string& flags) {
  const bool within = s.group == SummaryGroup::kProjection;
  const std::optional<double> none;
  return fmt::format("{:<34} {:>7} {:>7} {:>7} {:>9} {:>9} {:>8} {:>9}  {}\n", label,
                     number(within ? none : s.stats.rhat, 3), number(within ? none : s.stats.rhat_bulk, 3),
                     number(within ? none : s.stats.rhat_folded, 3), number(s.stats.ess_bulk, 0),
                     number(s.stats.ess_tail, 0), number(s.ess_per_second, 2),
                     number(s.ess_per_1000_grads, 2), flags);
}

std::string flag_text(const SummaryDiagnostics& s, double ess_threshold) {
  std::string text;
  if (s.flag_rhat) text += "R-hat>1.01 ";
  if (s.flag_ess) text += fmt::format("bulk<{} ", ess_threshold);
  if (s.flag_ess_tail) text += fmt::format("tail<{}", ess_threshold);
  if (!s.in_verdict && !text.empty()) text += " (not in verdict)";
  return text;
}

std::string group_label(SummaryGroup group, std::size_t count) {
  switch (group) {
    case SummaryGroup::kProbeLogLik: return "probe log-likelihood";
    case SummaryGroup::kProbeProb: return fmt::format("probe probabilities ({} rows)", count);
    case SummaryGroup::kLayerSqNorm: return fmt::format("layer squared norms ({})", count);
    case SummaryGroup::kProjection: return fmt::format("projections ({}, within-chain)", count);
    case SummaryGroup::kPotential: return "potential U (trace, after burn-in)";
  }
  return "?";
}

std::string text_report(const std::string& path, const RunDiagnostics& d, bool all) {
  std::string out = fmt::format("run {}: {}, {} chain{} x {} kept samples used", path, d.method,
                                d.chains, d.chains == 1 ? "" : "s", d.draws_per_chain);
  if (d.thin) out += fmt::format(", thinning {}", *d.thin);
  out += "\n";
  out += std::string(kFunctionSpaceExplanation) + "\n\n";
  out += fmt::format("{:<34} {:>7} {:>7} {:>7} {:>9} {:>9} {:>8} {:>9}  {}\n", "summary", "R-hat",
                     "bulk", "folded", "ESS bulk", "ESS tail", "ESS/s", "ESS/1k g", "flags");
  // ESS rates divide bulk-ESS by the cost summed over chains (seconds, gradients).
  // Groups in the order they were computed, each collapsed to its worst member.
  std::vector<SummaryGroup> order;
  std::map<SummaryGroup, std::vector<const SummaryDiagnostics*>> groups;
  for (const SummaryDiagnostics& s : d.summaries) {
    if (groups[s.group].empty()) order.push_back(s.group);
    groups[s.group].push_back(&s);
  }
  for (SummaryGroup group : order) {
    const auto& members = groups[group];
    if (all || members.size() == 1) {
      for (const SummaryDiagnostics* s : members) {
        out += row(members.size() == 1 ? group_label(group, 1) : s->name, *s, flag_text(*s, d.ess_threshold));
      }
      continue;
    }
    const SummaryDiagnostics* worst = members[0];
    int flagged = 0;
    for (const SummaryDiagnostics* s : members) {
      if (worse(*s, *worst)) worst = s;
      flagged += (s->flag_rhat || s->flag_ess || s->flag_ess_tail) ? 1 : 0;
    }
    out += row(group_label(group, members.size()), *worst,
               fmt::format("worst {}; {} of {} flagged", worst->name, flagged, members.size()));
  }
  out += "\n";
  if (!d.speed_ratio_per_chain.empty()) {
    std::string ratios;
    for (double r : d.speed_ratio_per_chain) ratios += (ratios.empty() ? "" : ", ") + number(r, 3);
    out += fmt::format("mean |v|/c per chain: {}. {}\n", ratios, d.speed_note);
  }
  for (const std::string& note : d.notes) out += "note: " + note + "\n";
  switch (d.verdict) {
    case MixingVerdict::kMixed:
      out += fmt::format("verdict: mixed. Max R-hat {} <= 1.01, min bulk-ESS {} and tail-ESS {} >= {} "
                         "over the function-space summaries.\n", number(d.max_rhat, 3),
                         number(d.min_ess_bulk, 0), number(d.min_ess_tail, 0), d.ess_threshold);
      break;
    case MixingVerdict::kNotMixed:
      out += fmt::format("verdict: NOT mixed. {} function-space summar{} flagged ({}min bulk-ESS {}); "
                         "run longer or more chains before trusting the ensemble.\n",
                         d.flagged, d.flagged == 1 ? "y" : "ies",
                         d.chains >= 2 ? "max R-hat " + number(d.max_rhat, 3) + ", " : "one chain, ",
                         number(d.min_ess_bulk, 0));
      break;
    case MixingVerdict::kSingleChain:
      out += fmt::format("verdict: one chain, min bulk-ESS {}; R-hat needs two or more chains, so "
                         "agreement between chains is unchecked.\n", number(d.min_ess_bulk, 0));
      break;
    case MixingVerdict::kNotEnoughDraws:
      out += "verdict: too few kept samples to diagnose.\n";
      break;
  }
  out += fmt::format("Thresholds: R-hat 1.01, bulk- and tail-ESS 100 per chain ({} here), both from "
                     "\"Rank-normalization, folding, and localization\" (Bayesian Analysis, 2021). "
                     "Flags are information: exit code 0.\n", d.ess_threshold);
  return out;
}

Status run_diagnose(const DiagnoseOptions& options) {
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(options.run_path);
  if (!reader.ok()) return reader.status();
  Result<RunDiagnostics> diagnostics = diagnose_run(**reader);
  if (!diagnostics.ok()) {
    return diagnostics.status().with_context(fmt::format("diagnosing {}", options.run_path));
  }
  // The end-of-run checks, with the probe rows' labels the run file keeps (a file of an
  // earlier build has none: the constant-prediction check is then left to train).
  std::optional<RunVerdict> verdict;
  if (Result<RunEvidence> evidence = gather_run_evidence(**reader); evidence.ok()) {
    verdict = judge_run(*evidence);
  }
  Result<Eigen::MatrixXd> precisions = (*reader)->prior_precisions();
  if (!precisions.ok()) return precisions.status();
  std::vector<BlockPrecision> prior = summarize_prior_precisions(*precisions);
  // The linear path's blocks come last, numbered after the output layer (nets/README.md).
  if (Result<NetSpec> spec = parse_net_text((*reader)->header().net_text, "the run's net");
      spec.ok() && spec->linear_path && !spec->hidden.empty()) {
    const int linear_layer = static_cast<int>(spec->hidden.size()) + 2;
    for (BlockPrecision& b : prior) b.linear_path = b.layer == linear_layer;
  }
  SteinSettings stein_settings;
  stein_settings.max_draws_per_chain = options.ksd_draws;
  stein_settings.data_path = options.data_path;
  Result<RunStein> stein = run_stein_discrepancy(**reader, stein_settings);
  if (!stein.ok()) return stein.status().with_context(fmt::format("scoring the draws of {}", options.run_path));
  std::string text = text_report(options.run_path, *diagnostics, options.all);
  text += "\n" + stein_text(*stein);
  text += "\n" + precision_text(prior);
  if (verdict) text += "\n" + verdict_text(*verdict);
  std::fwrite(text.data(), 1, text.size(), stdout);
  if (!options.json_path.empty()) {
    return write_file_atomically(
        options.json_path, diagnose_json(options.run_path, *diagnostics, prior, verdict, *stein));
  }
  return Status::ok_status();
}

}  // namespace

void add_diagnose_command(CLI::App& app, const GlobalOptions& /*global*/, CommandList& commands) {
  auto options = std::make_shared<DiagnoseOptions>();
  CLI::App* sub = app.add_subcommand(
      "diagnose",
      "Do the chains agree? R-hat (bulk, folded) and bulk/tail ESS of the run's function-space "
      "summaries; flags R-hat > 1.01 and bulk- or tail-ESS < 100 per chain. How close are the draws "
      "to the posterior? Kernel Stein discrepancy on the full-data score (reads the training rows). "
      "Exits 0 even when flags are raised (they are information, not failure); 2 for a missing or "
      "unreadable run file");
  sub->add_option("RUN.h5", options->run_path, "The run file")->required();
  sub->add_option("--json", options->json_path,
                  "Also write every number as JSON to this file (names: docs/diagnostics.md)");
  sub->add_option("--data", options->data_path,
                  "The table the run was trained on, for the kernel Stein discrepancy (default: the "
                  "path the run file records; its SHA-256 must match)");
  sub->add_option("--ksd-draws", options->ksd_draws,
                  "Kept samples per chain the kernel Stein discrepancy uses, evenly spaced; 0 skips "
                  "it (cost: docs/diagnostics.md)")
      ->capture_default_str()
      ->check(CLI::NonNegativeNumber);
  sub->add_flag("--all", options->all,
                "List every summary (each probe row, layer, projection) instead of the worst per group");
  commands.push_back({sub, [options] { return run_diagnose(*options); }});
}

}  // namespace credence::cli
