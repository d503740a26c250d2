// verdict_section: the end-of-run checks of each run, in plain words, on the report page.
#include "report/verdict_section.h"

#include <fmt/format.h>

#include <vector>

namespace credence::report {
namespace {

// Each check: the plain question it answers, and what to do when the answer is no.
struct CheckWords {
  std::string_view name, question, remedy;
};
constexpr CheckWords kWords[] = {
    {"drift", "Had the chains settled before the first kept sample?",
     "give a longer burn-in (--burn-in, or more --epochs in compare)"},
    {"constant", "Do predictions differ from row to row?",
     "the network learned nothing from the inputs: check the table and the prior scale"},
    {"pinned", "Are the weights free of the prior's pull to zero?",
     "the prior holds the weights at zero: raise --prior-scale or give more rows"},
    {"mixing", "Are there enough nearly independent draws?",
     "keep more samples over a longer run (--samples, --epochs)"},
    {"predictions", "Do the chains predict alike?",
     "run the chains longer before trusting the ensemble's probabilities"},
    {"scale", "Do the chains agree on the weights' scale?",
     "run longer; predictions may still agree, but the weight scales do not yet"},
    {"collapsed", "Does the learned prior leave the network room to fit?",
     "the evidence wants weights nearer zero than the fixed prior: give more rows or a "
     "smaller net, or compare with a sampler"},
};

const CheckWords* words_for(std::string_view check_name) {
  for (const CheckWords& w : kWords) {
    if (w.name == check_name) return &w;
  }
  return nullptr;
}

std::string_view remedy(std::string_view check_name) {
  const CheckWords* w = words_for(check_name);
  return w ? w->remedy : "see the check's message";
}

std::string plain_outcome(CheckOutcome outcome) {
  switch (outcome) {
    case CheckOutcome::kPassed: return "yes";
    case CheckOutcome::kFailed: return "NO";
    case CheckOutcome::kNotApplied: return "does not apply";
  }
  return "?";
}

}  // namespace

std::string_view check_question(std::string_view check_name) {
  const CheckWords* w = words_for(check_name);
  return w ? w->question : check_name;
}

void verdict_section(HtmlReport& page, std::span<const LabelledVerdict> runs) {
  bool any = false;
  for (const LabelledVerdict& run : runs) any = any || run.verdict != nullptr;
  if (!any) return;
  page.section("Can these runs be trusted?");
  page.paragraph(
      "After training, each run is checked for the usual ways a run ends before it is done: "
      "a potential still falling when the kept samples start, predictions that hardly vary "
      "between rows, weights the prior holds at zero, too few nearly independent draws, and "
      "chains that disagree. Agreement is judged on the probe rows' predicted probabilities "
      "apart from the layers' weight scales, with the published thresholds (R-hat at most "
      "1.01 and bulk-ESS of at least 100 per chain, from \"Rank-normalization, folding, and "
      "localization: an improved R-hat for assessing convergence of MCMC\", Bayesian "
      "Analysis, 2021). A run that fails a check may still score well above; its numbers "
      "are less certain to repeat.");
  for (const LabelledVerdict& run : runs) {
    if (run.verdict == nullptr) continue;
    const RunVerdict& v = *run.verdict;
    if (v.done()) {
      page.note(fmt::format("{}: done. It passed every check that applies to it.", run.label));
    } else {
      std::string failed;
      for (const VerdictCheck& c : v.checks) {
        if (c.outcome != CheckOutcome::kFailed) continue;
        failed += fmt::format(" {} No: {}.", check_question(c.name), remedy(c.name));
      }
      std::string more;
      if (v.more_steps_per_chain) {
        more = fmt::format(" At the rate measured, about {} more steps per chain would reach "
                           "the draws the checks ask for.",
                           *v.more_steps_per_chain);
      }
      page.note(fmt::format("{}: NOT done.{}{}", run.label, failed, more), NoteKind::kWarning);
    }
    std::vector<std::pair<std::string, std::string>> items;
    for (const VerdictCheck& c : v.checks) {
      items.emplace_back(std::string(check_question(c.name)),
                         fmt::format("{} ({}): {}", plain_outcome(c.outcome), c.name, c.message));
    }
    page.key_values(std::move(items));
  }
}

}  // namespace credence::report
