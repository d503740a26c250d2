// diagnose_json: a run's mixing diagnostics and verdict as the JSON of `credence diagnose`.
#include "report/diagnose_output.h"

#include <fmt/format.h>

#include "report/precision_output.h"
#include "report/stein_output.h"
#include "report/verdict_output.h"
#include "util/json.h"

namespace credence {
namespace {

std::string json_optional(const std::optional<double>& value) {
  return value ? json_number(*value) : "null";
}

std::string json_strings(const std::vector<std::string>& items) {
  std::string out;
  for (const std::string& item : items) out += (out.empty() ? "" : ", ") + json_string(item);
  return "[" + out + "]";
}

std::string json_without_verdict(const std::string& path, const RunDiagnostics& d) {
  std::string summaries;
  for (const SummaryDiagnostics& s : d.summaries) {
    summaries += fmt::format(
        "{}\n    {{\"name\": {}, \"group\": {}, \"index\": {}, \"in_verdict\": {}, \"rhat\": {}, "
        "\"rhat_bulk\": {}, \"rhat_folded\": {}, \"rhat_split\": {}, \"ess_bulk\": {}, "
        "\"ess_tail\": {}, \"ess_per_second\": {}, \"ess_per_1000_grads\": {}, \"flagged\": {}, "
        "\"flag_rhat\": {}, \"flag_ess\": {}, \"flag_ess_tail\": {}, \"draws_per_chain\": {}, "
        "\"notes\": {}}}",
        summaries.empty() ? "" : ",", json_string(s.name), json_string(summary_group_name(s.group)),
        s.index, s.in_verdict, json_optional(s.stats.rhat), json_optional(s.stats.rhat_bulk),
        json_optional(s.stats.rhat_folded), json_optional(s.stats.rhat_split),
        json_number(s.stats.ess_bulk), json_number(s.stats.ess_tail), json_number(s.ess_per_second),
        json_number(s.ess_per_1000_grads), s.flag_rhat || s.flag_ess || s.flag_ess_tail, s.flag_rhat,
        s.flag_ess, s.flag_ess_tail,
        s.stats.draws_per_chain, json_strings(s.stats.notes));
  }
  std::string kept, speeds;
  for (std::int64_t k : d.kept_per_chain) kept += (kept.empty() ? "" : ", ") + fmt::format("{}", k);
  for (double r : d.speed_ratio_per_chain) speeds += (speeds.empty() ? "" : ", ") + json_number(r);
  return fmt::format(
      "{{\"run_file\": {}, \"method\": {}, \"chains\": {}, \"kept_per_chain\": [{}], "
      "\"draws_per_chain\": {}, \"thin\": {}, \"burn_in\": {}, \"rhat_available\": {}, "
      "\"thresholds\": {{\"rhat\": {}, \"ess_per_chain\": {}, \"ess\": {}}}, \"verdict\": {}, \"max_rhat\": {}, "
      "\"min_ess_bulk\": {}, \"min_ess_tail\": {}, \"flagged_count\": {}, "
      "\"speed_ratio_per_chain\": [{}], \"speed_note\": {}, \"explanation\": {}, \"notes\": {}, "
      "\"summaries\": [{}\n  ]}}\n",
      json_string(path), json_string(d.method), d.chains, kept, d.draws_per_chain,
      d.thin ? fmt::format("{}", *d.thin) : "null", d.burn_in ? fmt::format("{}", *d.burn_in) : "null",
      d.chains >= 2, json_number(d.rhat_threshold), json_number(kEssPerChainThreshold),
      json_number(d.ess_threshold),
      json_string(mixing_verdict_name(d.verdict)), json_number(d.max_rhat),
      json_number(d.min_ess_bulk), json_number(d.min_ess_tail), d.flagged, speeds,
      json_string(d.speed_note), json_string(kFunctionSpaceExplanation), json_strings(d.notes), summaries);
}

}  // namespace

std::string diagnose_json(const std::string& run_path, const RunDiagnostics& diagnostics,
                          const std::vector<BlockPrecision>& prior,
                          const std::optional<RunVerdict>& verdict,
                          const std::optional<RunStein>& stein) {
  std::string json = json_without_verdict(run_path, diagnostics);
  json = json.substr(0, json.rfind('}')) + ", \"prior_precision\": " + precision_json(prior) + "}\n";
  json = json.substr(0, json.rfind('}')) + ", \"stein\": " + (stein ? stein_json(*stein) : "null") +
         "}\n";
  if (verdict) {
    JsonWriter j;
    write_verdict(j, *verdict);
    json = json.substr(0, json.rfind('}')) + ", \"run_verdict\": " + j.str() + "}\n";
  }
  return json;
}

}  // namespace credence
