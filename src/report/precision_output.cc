// precision_text, precision_json: a learned prior's block precisions in diagnose.
#include "report/precision_output.h"

#include <fmt/format.h>

#include "util/json.h"

namespace credence {

std::string precision_text(const std::vector<BlockPrecision>& blocks) {
  if (blocks.empty()) {
    return "learned prior: none (the prior's scale was fixed; nothing to summarise)\n";
  }
  std::string out = fmt::format(
      "learned prior precisions over the kept samples (lambda; prior sd = 1/sqrt(lambda)):\n"
      "{:<9} {:<8} {:>11} {:>25} {:>12}\n",
      "layer", "block", "mean", "90% interval", "sd at mean");
  for (const BlockPrecision& b : blocks) {
    const std::string layer =
        b.linear_path ? fmt::format("{} linear", b.layer) : std::to_string(b.layer);
    out += fmt::format("{:<9} {:<8} {:>11.4g} {:>25} {:>12.4g}\n", layer,
                       b.biases ? "biases" : "weights", b.mean,
                       fmt::format("{:.4g} to {:.4g}", b.lo, b.hi), b.sd_at_mean());
  }
  return out;
}

std::string precision_json(const std::vector<BlockPrecision>& blocks) {
  if (blocks.empty()) return "null";
  JsonWriter j;
  j.begin_array();
  for (const BlockPrecision& b : blocks) {
    j.begin_object();
    j.key("layer").value(b.layer);
    j.key("block").value(b.biases ? "biases" : "weights");
    j.key("linear_path").value(b.linear_path);
    j.key("samples").value(b.samples);
    j.key("mean").value(b.mean);
    j.key("q05").value(b.lo);
    j.key("q95").value(b.hi);
    j.key("sd_at_mean").value(b.sd_at_mean());
    j.end_object();
  }
  j.end_array();
  std::string text = j.str();
  while (!text.empty() && text.back() == '\n') text.pop_back();
  return text;
}

}  // namespace credence
