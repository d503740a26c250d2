// The report's two-class section: decisions at the threshold, the precision-recall and
// ROC curves, and the positive-class reliability curve (numbers: src/metrics/decisions.cc,
// curves.cc).
#pragma once

#include <string>
#include <vector>

#include "credence/plot.h"
#include "report/report_page.h"

namespace credence::report {

/// The curves of every run that has them, one series per run, as charts (public for
/// tests): precision against recall (legend: average precision), true against false
/// positive rate with the chance diagonal (legend: area), observed positive rate against
/// mean P(positive) per equal-width bin with the diagonal of perfect calibration.
LineChart precision_recall_chart(const std::vector<MethodRun>& runs);
LineChart roc_chart(const std::vector<MethodRun>& runs);
LineChart positive_reliability_chart(const std::vector<MethodRun>& runs);

/// Adds the section when the runs have two classes (their assessments carry decisions):
/// the positive class and how the threshold was chosen, a table of the decisions at it
/// with average precision and ROC area, and the three charts, each with a caption that
/// states its numbers in words. Adds nothing otherwise.
void decisions_section(HtmlReport& page, const std::vector<MethodRun>& runs);

}  // namespace credence::report
