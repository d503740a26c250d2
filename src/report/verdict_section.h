// The report's "Can these runs be trusted?" section: each run's end-of-run verdict
// (run_verdict.h) in plain words, one block per run, beside the numbers it rests on.
#pragma once

#include <span>
#include <string>

#include "credence/html_report.h"
#include "credence/run_verdict.h"

namespace credence::report {

/// One run's verdict as the page shows it; `verdict` may be null (not judged).
struct LabelledVerdict {
  std::string label;
  const RunVerdict* verdict = nullptr;
};

/// The plain question a check answers ("Did the chains settle before the kept samples?").
std::string_view check_question(std::string_view check_name);

/// Adds the section: an introduction, then per run a note (done) or warning (not done)
/// saying what failed and what to do, and every check with its outcome and numbers.
/// Adds nothing when no run has a verdict.
void verdict_section(HtmlReport& page, std::span<const LabelledVerdict> runs);

}  // namespace credence::report
