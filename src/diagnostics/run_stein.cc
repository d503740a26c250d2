// run_stein_discrepancy: a run's kept samples, their full-data scores, and the IMQ
// discrepancy per chain and pooled (include/credence/run_stein.h).
#include "credence/run_stein.h"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <map>

#include "credence/data.h"
#include "credence/run_settings.h"

namespace credence {
namespace {

RunStein skipped(std::string note) {
  RunStein out;
  out.note = std::move(note);
  return out;
}

std::string target_text(const PriorSpec& prior, double temperature, Tempering tempering) {
  std::string text = prior.learn_scale
                         ? "the theta-marginal of the posterior (learned prior scale: each "
                           "block's prior integrated over its precision)"
                         : "the posterior (fixed Gaussian prior)";
  text += fmt::format(" over every training row, T = {}", temperature);
  if (temperature != 1) {
    text += tempering == Tempering::kWholePosterior ? ", prior and likelihood tempered"
                                                    : ", likelihood tempered";
  }
  return text;
}

// Why the table at `path` cannot give the run's training rows, or empty when it can.
std::string data_problem(const RunHeader& header, const std::string& path) {
  Result<std::string> digest = file_sha256_hex(path);
  if (!digest.ok()) return fmt::format("{}: cannot be read", path);
  if (*digest != header.data_sha256) {
    return fmt::format("{}: its SHA-256 differs from the run's data file ({}...)", path,
                       header.data_sha256.substr(0, 12));
  }
  return {};
}

}  // namespace

std::vector<std::int64_t> evenly_spaced_draws(std::int64_t kept, std::int64_t cap) {
  const std::int64_t n = std::min(kept, cap);
  std::vector<std::int64_t> positions;
  positions.reserve(static_cast<std::size_t>(std::max<std::int64_t>(n, 0)));
  for (std::int64_t i = 0; i < n; ++i) positions.push_back(i * kept / n);
  return positions;
}

Result<PosteriorScore> posterior_score_of_run(const RunReader& run, const std::string& data_path) {
  const RunHeader& header = run.header();
  TrainSettings train;
  ReadOptions read;
  CREDENCE_RETURN_IF_ERROR(from_values(header.settings, train, read));
  if (const std::string problem = data_problem(header, data_path); !problem.empty()) {
    return Status::invalid_input(problem + "; give the table the run was trained on");
  }
  read.text_columns = text_columns_of(header.preprocessing);
  Result<Table> table = read_table(data_path, read);
  if (!table.ok()) return table.status();
  Result<Eigen::MatrixXf> x = transform_rows(header.preprocessing, *table, header.train_rows);
  if (!x.ok()) return x.status();
  Result<std::vector<std::int32_t>> labels = encode_labels(header.preprocessing, *table);
  if (!labels.ok()) return labels.status();
  std::vector<std::int32_t> train_labels;
  train_labels.reserve(header.train_rows.size());
  for (std::int64_t r : header.train_rows) {
    train_labels.push_back((*labels)[static_cast<std::size_t>(r)]);
  }
  Result<NetSpec> spec = parse_net_text(header.net_text, "net text stored in the run file");
  if (!spec.ok()) return spec.status();
  Result<ParamLayout> layout =
      resolve_layout(*spec, header.preprocessing.input_width,
                     static_cast<Index>(header.preprocessing.class_names.size()));
  if (!layout.ok()) return layout.status();
  return PosteriorScore::create(*layout, spec->prior, train.sampler.temperature, train.tempering,
                                x->cast<double>(), std::move(train_labels));
}

Result<RunStein> run_stein_discrepancy(const RunReader& run, const SteinSettings& settings) {
  const auto start = std::chrono::steady_clock::now();
  const RunHeader& header = run.header();
  TrainSettings train;
  ReadOptions read;
  CREDENCE_RETURN_IF_ERROR(from_values(header.settings, train, read));
  if (settings.max_draws_per_chain <= 0) return skipped("not computed (--ksd-draws 0)");
  if (!is_sampler(train.sampler.method)) {
    return skipped(
        fmt::format("not computed: {} is an optimizer, so each chain is one point, "
                    "not draws from a distribution",
                    method_name(train.sampler.method)));
  }
  if (!(train.sampler.temperature > 0)) {
    return skipped("not computed: at temperature 0 the target is a point, not a distribution");
  }

  // Draws per chain in kept order, thinned evenly to the cap.
  Result<std::vector<std::int32_t>> chains = run.sample_chains();
  if (!chains.ok()) return chains.status();
  Result<std::vector<std::int64_t>> indices = run.sample_indices();
  if (!indices.ok()) return indices.status();
  std::map<int, std::vector<std::pair<std::int64_t, Index>>> by_chain;  // kept index, column
  for (std::size_t s = 0; s < chains->size(); ++s) {
    by_chain[(*chains)[s]].emplace_back((*indices)[s], static_cast<Index>(s));
  }
  if (by_chain.empty()) return skipped("not computed: the run has no kept samples");
  std::vector<std::pair<int, std::vector<Index>>> used;  // chain, columns of samples()
  std::int64_t n = 0;
  for (auto& [chain, kept] : by_chain) {
    std::sort(kept.begin(), kept.end());
    std::vector<Index> columns;
    for (std::int64_t p : evenly_spaced_draws(static_cast<std::int64_t>(kept.size()),
                                              settings.max_draws_per_chain)) {
      columns.push_back(kept[static_cast<std::size_t>(p)].second);
    }
    n += static_cast<std::int64_t>(columns.size());
    used.emplace_back(chain, std::move(columns));
  }
  RunStein out;
  out.train_rows = static_cast<std::int64_t>(header.train_rows.size());
  out.parameters = header.parameters;
  out.max_draws_per_chain = settings.max_draws_per_chain;
  out.kernel = settings.kernel;
  const auto nn = static_cast<double>(n);
  out.work = nn * static_cast<double>(out.parameters) * (static_cast<double>(out.train_rows) + nn);
  if (out.work > settings.max_work) {
    RunStein s = skipped(fmt::format(
        "not computed: {} draws x {} parameters x ({} training rows + {} draws) = {:.3g} "
        "exceeds the limit {:.3g}; give fewer draws per chain with --ksd-draws",
        n, out.parameters, out.train_rows, n, out.work, settings.max_work));
    s.work = out.work;
    return s;
  }

  const std::string path = settings.data_path.empty() ? header.data_file : settings.data_path;
  if (const std::string problem = data_problem(header, path);
      !problem.empty() && settings.data_path.empty()) {
    return skipped("not computed: " + problem +
                   "; the discrepancy needs the training rows: give the run's table with --data");
  }
  Result<PosteriorScore> score = posterior_score_of_run(run, path);
  if (!score.ok()) return score.status();
  Result<NetSpec> spec = parse_net_text(header.net_text, "net text stored in the run file");
  if (!spec.ok()) return spec.status();
  out.target = target_text(spec->prior, train.sampler.temperature, train.tempering);

  Result<Eigen::MatrixXf> samples = run.samples();  // (P, S)
  if (!samples.ok()) return samples.status();
  Eigen::MatrixXd draws(samples->rows(), n), scores(samples->rows(), n);  // (P, n)
  Index column = 0;
  Eigen::VectorXd theta, s;
  for (const auto& [chain, columns] : used) {
    const Index first = column;
    for (Index c : columns) {
      theta = samples->col(c).cast<double>();
      CREDENCE_RETURN_IF_ERROR(score->score(theta, s));
      draws.col(column) = theta;
      scores.col(column) = s;
      ++column;
    }
    Result<SteinDiscrepancy> ksd =
        kernel_stein_discrepancy(draws.middleCols(first, column - first),
                                 scores.middleCols(first, column - first), settings.kernel);
    if (!ksd.ok()) return ksd.status();
    out.chains.push_back({chain, static_cast<std::int64_t>(by_chain[chain].size()), *ksd});
  }
  Result<SteinDiscrepancy> pooled = kernel_stein_discrepancy(draws, scores, settings.kernel);
  if (!pooled.ok()) return pooled.status();
  out.pooled = *pooled;
  out.computed = true;
  out.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return out;
}

Result<RunStein> run_stein_discrepancy(const std::string& run_path, const SteinSettings& settings) {
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(run_path);
  if (!reader.ok()) return reader.status();
  return run_stein_discrepancy(**reader, settings);
}

}  // namespace credence
