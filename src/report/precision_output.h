// diagnose's summary of a learned prior's precisions (prior_summary.h), as text and JSON.
#pragma once

#include <string>
#include <vector>

#include "credence/prior_summary.h"

namespace credence {

/// A short table, one line per block: layer, weights or biases, mean precision, its 90%
/// interval over the kept samples, and the prior sd at the mean; or one line saying the
/// prior's scale was fixed when `blocks` is empty. Ends in a newline.
std::string precision_text(const std::vector<BlockPrecision>& blocks);

/// A JSON array [{layer, block ("weights"/"biases"), samples, mean, q05, q95,
/// sd_at_mean}], or null when the prior was fixed (no block learned).
std::string precision_json(const std::vector<BlockPrecision>& blocks);

}  // namespace credence
