// verdict_text, write_verdict: the run_verdict checks as text and JSON.
#include "report/verdict_output.h"

#include <fmt/format.h>

namespace credence {

std::string verdict_text(const RunVerdict& verdict, std::string_view label) {
  std::string out;
  for (const std::string& line : verdict_lines(verdict)) {
    out += out.empty() ? fmt::format("verdict{}{}: {}\n", label.empty() ? "" : " ", label, line)
                       : "  " + line + "\n";
  }
  return out;
}

void write_verdict(JsonWriter& j, const RunVerdict& verdict) {
  j.begin_object();
  j.key("done").value(verdict.done());
  j.key("headline").value(verdict.headline);
  j.key("more_steps_per_chain").value_or_null(verdict.more_steps_per_chain);
  j.key("checks").begin_array();
  for (const VerdictCheck& c : verdict.checks) {
    j.begin_object();
    j.key("name").value(c.name);
    j.key("outcome").value(check_outcome_name(c.outcome));
    j.key("value").value(c.value);
    j.key("threshold").value(c.threshold);
    j.key("message").value(c.message);
    j.end_object();
  }
  j.end_array();
  j.end_object();
}

}  // namespace credence
