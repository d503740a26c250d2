// copy_committed: a run's committed rows, traces and chain states onto another writer.
#include "ensemble/copy_committed.h"

namespace credence::run_file {
namespace {

// Gives `state` exactly the template's names and sizes (zeros where it had none).
template <typename Map>
void conform(Map& state, const Map& templ) {
  Map out;
  for (const auto& [name, values] : templ) {
    auto found = state.find(name);
    if (found != state.end() && found->second.size() == values.size()) {
      out[name] = found->second;
    } else {
      out[name].assign(values.size(), {});
    }
  }
  state = std::move(out);
}

}  // namespace

Status copy_committed(const RunReader& run, RunWriter& writer, int chain_base) {
  const RunHeader& header = writer.header();
  Result<Eigen::MatrixXf> theta = run.samples();  // (P, S)
  Result<std::vector<std::int32_t>> chains = run.sample_chains();
  Result<std::vector<std::int64_t>> steps = run.sample_steps();
  Result<std::vector<std::int64_t>> indices = run.sample_indices();
  Result<std::vector<double>> log_lik = run.probe_log_lik();
  Result<Eigen::MatrixXf> probe = run.probe_prob();         // (R, S)
  Result<Eigen::MatrixXf> projections = run.projections();  // (J, S)
  Result<Eigen::MatrixXf> norms = run.layer_sq_norms();     // (L, S)
  Result<Eigen::MatrixXd> precisions = run.prior_precisions();  // (2L, S)
  Result<std::vector<ChainState>> states = run.chain_states();
  for (const Status& s :
       {theta.status(), chains.status(), steps.status(), indices.status(), log_lik.status(),
        probe.status(), projections.status(), norms.status(), precisions.status(),
        states.status()}) {
    CREDENCE_RETURN_IF_ERROR(s);
  }
  for (Eigen::Index j = 0; j < theta->cols(); ++j) {
    const auto k = static_cast<std::size_t>(j);
    SampleRecord record;
    record.chain = chain_base + (*chains)[k];
    record.step = (*steps)[k];
    record.index = (*indices)[k];
    record.theta = {theta->col(j).data(), static_cast<std::size_t>(theta->rows())};
    record.probe_log_lik = (*log_lik)[k];
    record.probe_prob = {probe->col(j).data(), static_cast<std::size_t>(probe->rows())};
    record.projections = {projections->col(j).data(),
                          static_cast<std::size_t>(projections->rows())};
    record.layer_sq_norms = {norms->col(j).data(), static_cast<std::size_t>(norms->rows())};
    // NaN columns (a fixed prior) are written back as NaN.
    if (!precisions->col(j).hasNaN()) {
      record.prior_precision = {precisions->col(j).data(),
                                static_cast<std::size_t>(precisions->rows())};
    }
    CREDENCE_RETURN_IF_ERROR(writer.append_sample(record));
  }
  for (int c = 0; c < run.header().chains; ++c) {
    Result<std::vector<TraceRecord>> traces = run.traces(c);
    if (!traces.ok()) return traces.status();
    for (TraceRecord trace : *traces) {
      trace.chain = chain_base + c;
      CREDENCE_RETURN_IF_ERROR(writer.append_trace(trace));
    }
  }
  for (ChainState state : *states) {
    if (static_cast<std::int64_t>(state.theta.size()) != header.parameters)
      continue;  // never checkpointed
    state.chain += chain_base;
    conform(state.state.floats, header.state_template.floats);
    conform(state.state.doubles, header.state_template.doubles);
    conform(state.state.words, header.state_template.words);
    CREDENCE_RETURN_IF_ERROR(writer.set_chain_state(std::move(state)));
  }
  return writer.commit();
}

}  // namespace credence::run_file
