// The settings a report lists for one run: those its method reads, in words.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "credence/ensemble.h"

namespace credence::report {

/// The run's method name ("adam"), or "run" when the file names none.
std::string method_of(const RunHeader& header);

/// "20 inputs -> 32 relu -> 32 relu -> 2 classes" from the stored net text (inspect and
/// the report's settings say it alike).
std::string network_words(const RunHeader& header);

/// Rows (name, value) for the settings table of one run: the method and its own
/// settings (which method reads which follows `credence train`'s method_flags table, so a
/// flag train refuses for the method is never shown), the budget in words (an optimizer's
/// steps and passes and its early stop; a sampler's burn-in, thinning and kept samples),
/// the data, network and seed settings. The data reader's missing-value tokens read as a
/// quoted list. Settings this version does not know are listed as stored.
std::vector<std::pair<std::string, std::string>> settings_rows(const RunHeader& header);

}  // namespace credence::report
