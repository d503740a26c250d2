// diagnose_scalar: every number diagnose reports for one summary, with its caveats.
#include <fmt/format.h>

#include <cmath>
#include <limits>

#include "credence/diagnostics.h"

namespace credence {

ScalarDiagnostics diagnose_scalar(const Chains& chains) {
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  ScalarDiagnostics d;
  d.chains = static_cast<int>(chains.size());
  d.ess_bulk = kNaN;
  d.ess_tail = kNaN;
  if (chains.empty()) {
    d.notes.push_back("no chains");
    return d;
  }
  const Chains equal = common_length(chains);
  d.draws_per_chain = static_cast<long>(equal[0].size());
  for (const std::vector<double>& chain : chains) {
    if (static_cast<long>(chain.size()) != d.draws_per_chain) d.lengths_differed = true;
  }
  if (d.lengths_differed) {
    d.notes.push_back(fmt::format("chains differ in length; the first {} draws of each are used",
                                  d.draws_per_chain));
  }
  d.draws_per_split_chain = d.draws_per_chain / 2;
  if (d.chains < 2) d.notes.push_back("R-hat needs two or more chains; ESS is from the two halves of the one chain");
  if (d.draws_per_chain < 4) {
    d.notes.push_back(fmt::format("{} draws per chain are too few to diagnose", d.draws_per_chain));
    return d;
  }
  if (d.draws_per_split_chain < kMinDrawsPerSplitChain) {
    d.notes.push_back(fmt::format("only {} draws per split chain (fewer than {}): estimates are unstable",
                                  d.draws_per_split_chain, kMinDrawsPerSplitChain));
  }
  bool finite = true;
  bool constant = true;
  for (const std::vector<double>& chain : equal) {
    for (double value : chain) {
      finite = finite && std::isfinite(value);
      constant = constant && value == equal[0][0];
    }
  }
  if (!finite) d.notes.push_back("some draws are not finite (NaN or infinite)");
  if (finite && constant) d.notes.push_back("every draw is equal: nothing to diagnose");

  d.ess_bulk = bulk_ess(equal);
  d.ess_tail = tail_ess(equal);
  if (d.chains >= 2) {
    d.rhat_split = split_rhat(equal);
    d.rhat_bulk = bulk_rhat(equal);
    d.rhat_folded = folded_rhat(equal);
    d.rhat = (std::isnan(*d.rhat_bulk) || std::isnan(*d.rhat_folded))
                 ? kNaN
                 : std::max(*d.rhat_bulk, *d.rhat_folded);
  }
  return d;
}

}  // namespace credence
