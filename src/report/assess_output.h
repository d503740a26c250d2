// The text table and the JSON document of `credence assess` (docs/assess-json.md).
#pragma once

#include <string>

#include "credence/assess.h"

namespace credence {

struct AssessHeadline {
  std::string run_path;
  std::string data_path;
  Binning binning = Binning::kEqualWidth;  // the headline ECE, MCE and reliability table
};

/// The table for stdout: metrics with intervals and single-sample means, the reliability
/// table, accuracy when abstaining, temperature scaling, then the cautions.
std::string assess_text(const AssessJobResult& result, const AssessHeadline& headline);

/// The reliability diagram (SVG) of the headline table, with the temperature-scaled
/// ensemble beside it when a temperature was fitted.
std::string assess_plot(const AssessJobResult& result, const AssessHeadline& headline);

/// The JSON document (names in docs/assess-json.md).
std::string assess_json(const AssessJobResult& result, const AssessHeadline& headline);

}  // namespace credence
