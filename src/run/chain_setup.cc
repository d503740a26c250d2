// factory_of, init_of, chain_settings_of, hooks_into (chain_setup.h).
#include "run/chain_setup.h"

#include <cmath>

#include "credence/held_out.h"
#include "run/resume.h"
#include "util/rng.h"

namespace credence {

// The potential factory and the starting points: both depend on (seed, global chain
// index) only, so a chain gives the same samples in whichever process runs it.
PotentialFactory factory_of(const PreparedRun& p) {
  return [&p](int chain) -> std::unique_ptr<PotentialFn> {
    const TrainSettings& s = p.settings;
    // The batch order of chain c depends on (seed, c) only, not on thread timing.
    auto potential = TablePotential::create(
        p.rows, p.layout, p.spec.prior, potential_settings_of(s), s.batches,
        stream_seed(s.chains.seed, SeedPurpose::kBatches, static_cast<std::uint64_t>(chain)));
    return potential.ok() ? std::move(*potential) : nullptr;
  };
}

ChainSettings chain_settings_of(const PreparedRun& p) {
  ChainSettings chains = p.settings.chains;
  if (chains.early_stop.every > 0) chains.early_stop.scorer = held_out_nll(p.layout, p.held_out);
  return chains;
}

InitFn init_of(const PreparedRun& p) {
  return [&p](int chain, ThetaRef theta) {
    Eigen::VectorXf start(theta.size());
    initialize_params<float>(start, p.layout,
                             stream_seed(p.settings.init_seed, SeedPurpose::kInit,
                                         static_cast<std::uint64_t>(chain)));
    theta = start;
    return Status::ok_status();
  };
}

ChainHooks hooks_into(const std::function<void(ChainMessage)>& push) {
  ChainHooks hooks;
  hooks.on_trace = [push](const TraceRow& row) {
    push(TraceRecord{.chain = row.chain,
                     .step = row.step,
                     .potential = row.report.potential,
                     .accuracy = row.report.accuracy.value_or(std::nan("")),
                     .step_size = row.report.step_size,
                     .speed_ratio = row.report.speed_ratio.value_or(std::nan("")),
                     .acceptance = row.report.acceptance.value_or(std::nan(""))});
  };
  hooks.on_sample = [push](const KeptSample& sample) {
    push(SampleMessage{sample.chain, sample.step, sample.index, sample.theta,
                       std::vector<double>(sample.hyperparameters.begin(),
                                           sample.hyperparameters.end())});
  };
  hooks.on_checkpoint = [push](const ChainCheckpoint& c) { push(state_of(c)); };
  return hooks;
}

}  // namespace credence
