// gather_run_evidence: what judge_run reads, taken from a run file.
#include <fmt/format.h>

#include <cmath>
#include <limits>

#include "credence/net.h"
#include "credence/posterior.h"
#include "credence/run_verdict.h"
#include "credence/samplers_settings.h"
#include "diagnostics/run_columns.h"
#include "util/log.h"

namespace credence {
namespace {

constexpr double kNaNPrecision = std::numeric_limits<double>::quiet_NaN();

// Mean ||W_l||^2 over the kept samples and its prior expectation out*in*sigma_w^2, per
// layer; both left empty when the net text does not resolve to a fixed Gaussian prior.
Status read_weight_norms(const RunReader& run, RunEvidence& e) {
  const RunHeader& header = run.header();
  Result<NetSpec> spec = parse_net_text(header.net_text, "the run file's net");
  if (!spec.ok()) return Status::ok_status();
  Result<ParamLayout> layout =
      resolve_layout(*spec, static_cast<Index>(header.preprocessing.input_width),
                     static_cast<Index>(header.preprocessing.class_names.size()));
  if (!layout.ok() || layout->num_params != header.parameters) return Status::ok_status();
  Result<GaussianPrior> prior = GaussianPrior::create(spec->prior, *layout);
  if (!prior.ok()) return Status::ok_status();
  Result<Eigen::MatrixXf> theta = run.samples();
  if (!theta.ok()) return theta.status();
  if (theta->cols() == 0) return Status::ok_status();
  for (std::size_t l = 0; l < layout->layers.size(); ++l) {
    const LayerLayout& layer = layout->layers[l];
    const Index size = layer.out * layer.in;
    const double sum = theta->middleRows(layer.weight_offset, size).cast<double>().squaredNorm();
    e.layer_weight_sq_norm.push_back(sum / static_cast<double>(theta->cols()));
    const double sigma = prior->sigmas()[l].weight_sigma;
    e.layer_prior_weight_sq_norm.push_back(static_cast<double>(size) * sigma * sigma);
  }
  if (!spec->prior.learn_scale) return Status::ok_status();
  // A learned scale: the prior built from the spec holds the fixed start, which the
  // evidence updates take as each block's cap (posterior/precision_evidence.h).
  Result<Eigen::MatrixXd> lambda = run.prior_precisions();  // (2L, S): weights, then biases
  if (!lambda.ok()) return lambda.status();
  const std::span<const double> cap = prior->block_precisions();
  if (lambda->rows() != static_cast<Eigen::Index>(cap.size())) return Status::ok_status();
  for (std::size_t l = 0; l < layout->layers.size(); ++l) {
    double largest = kNaNPrecision;
    for (Eigen::Index s = 0; s < lambda->cols(); ++s) {
      const double v = (*lambda)(static_cast<Eigen::Index>(2 * l), s);
      if (std::isfinite(v) && !(v <= largest)) largest = v;
    }
    e.layer_weight_precision.push_back(largest);
    e.layer_weight_precision_cap.push_back(cap[2 * l]);
  }
  return Status::ok_status();
}

}  // namespace

Result<RunEvidence> gather_run_evidence(const RunReader& run,
                                        std::span<const std::int32_t> probe_labels) {
  using diagnostics::setting;
  const RunHeader& header = run.header();
  if (run.summary().samples == 0) {
    return Status::invalid_input("the run holds no committed samples yet; nothing to judge");
  }
  RunEvidence e;
  e.method = setting<std::string>(header.settings, "method").value_or("unknown");
  if (Result<Method> method = parse_method(e.method); method.ok()) e.sampler = is_sampler(*method);
  e.chains = header.chains;
  e.thin = setting<std::int64_t>(header.settings, "thin").value_or(1);
  e.trace_every = setting<std::int64_t>(header.settings, "trace_every").value_or(1);
  const std::int64_t burn_in = setting<std::int64_t>(header.settings, "burn_in").value_or(0);

  Result<std::vector<std::int32_t>> chain_of = run.sample_chains();
  if (!chain_of.ok()) return chain_of.status();
  Result<std::vector<std::int64_t>> index_of = run.sample_indices();
  if (!index_of.ok()) return index_of.status();
  const auto columns = diagnostics::columns_by_chain(e.chains, *chain_of, *index_of);

  Result<std::vector<double>> log_lik = run.probe_log_lik();
  if (!log_lik.ok()) return log_lik.status();
  e.probe_log_lik = diagnostics::chains_of(*log_lik, columns);
  Result<Eigen::MatrixXf> prob = run.probe_prob();
  if (!prob.ok()) return prob.status();
  for (Eigen::Index r = 0; r < prob->rows(); ++r) {
    e.probe_prob.push_back(diagnostics::chains_of_row(*prob, r, columns));
  }
  Result<Eigen::MatrixXf> norms = run.layer_sq_norms();
  if (!norms.ok()) return norms.status();
  for (Eigen::Index l = 0; l < norms->rows(); ++l) {
    e.layer_sq_norm.push_back(diagnostics::chains_of_row(*norms, l, columns));
  }
  // The caller's labels, else those the run file keeps (files of earlier builds lack them).
  if (probe_labels.empty()) probe_labels = header.probe_labels;
  if (probe_labels.size() == static_cast<std::size_t>(prob->rows())) {
    e.probe_labels.assign(probe_labels.begin(), probe_labels.end());
  }
  // Optimizers keep one point per restart, so reading theta is cheap; samplers skip it.
  if (!e.sampler) CREDENCE_RETURN_IF_ERROR(read_weight_norms(run, e));

  for (int c = 0; c < e.chains; ++c) {
    Result<std::vector<TraceRecord>> trace = run.traces(c);
    if (!trace.ok()) return trace.status();
    std::vector<double> after;
    for (const TraceRecord& row : *trace) {
      if (row.step > burn_in) after.push_back(row.potential);
    }
    e.potential.push_back(std::move(after));
  }
  return e;
}

std::optional<RunVerdict> judge_run_file(const std::string& run_path,
                                         std::span<const std::int32_t> probe_labels) {
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(run_path);
  if (!reader.ok()) {
    log().warn("{}: no end-of-run verdict: {}", run_path, reader.status().message());
    return std::nullopt;
  }
  Result<RunEvidence> evidence = gather_run_evidence(**reader, probe_labels);
  if (!evidence.ok()) {
    log().warn("{}: no end-of-run verdict: {}", run_path, evidence.status().message());
    return std::nullopt;
  }
  return judge_run(*evidence);
}

}  // namespace credence
