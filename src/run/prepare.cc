// prepare_new_run: a new run's data, network, budget and run-file header.
#include <fmt/chrono.h>
#include <fmt/format.h>

#include <algorithm>
#include <ctime>

#include "credence/held_out.h"
#include "credence/version.h"
#include "run/prepared_run.h"
#include "util/log.h"
#include "util/memory_guard.h"
#include "util/warn_once.h"

namespace credence {
namespace {

// A network with this many times more parameters than training rows leans on its prior.
constexpr std::int64_t kParametersPerRowWarning = 10;

std::string utc_now() {
  return fmt::format("{:%Y-%m-%dT%H:%M:%SZ}", fmt::gmtime(std::time(nullptr)));
}

// Optimizers keep only their final iterate: one kept sample after `steps` steps.
void shape_optimizer_chains(TrainSettings& s, std::int64_t train_rows) {
  if (is_sampler(s.sampler.method)) return;
  std::int64_t steps = s.steps;
  if (steps <= 0) {
    const std::int64_t batch = std::min(s.batches.batch_rows, train_rows);
    const std::int64_t per_epoch = (train_rows + batch - 1) / batch;
    steps = std::max<std::int64_t>(1, static_cast<std::int64_t>(s.epochs * static_cast<double>(per_epoch)));
  }
  s.chains.burn_in = steps - 1;
  s.chains.thin = 1;
  s.chains.samples = 1;
}

// Probe rows: up to `count` validation rows spread evenly over the split (training
// rows when there is no validation split), fixed for the whole run.
std::vector<std::int64_t> choose_probe_rows(const std::vector<std::int64_t>& validation,
                                            const std::vector<std::int64_t>& train,
                                            std::int64_t count) {
  const std::vector<std::int64_t>& pool = validation.empty() ? train : validation;
  const auto n = static_cast<std::int64_t>(pool.size());
  const std::int64_t r = std::min(count, n);
  std::vector<std::int64_t> rows;
  for (std::int64_t i = 0; i < r; ++i) rows.push_back(pool[static_cast<std::size_t>(i * n / r)]);
  return rows;
}

// A class some training row holds and no validation row does ("" when none, or without
// validation rows): early stopping on such rows is refused a default (size_early_stop).
std::string class_missing_from(const std::vector<std::int32_t>& labels,
                               const std::vector<std::int64_t>& train,
                               const std::vector<std::int64_t>& validation,
                               const std::vector<std::string>& class_names) {
  if (validation.empty()) return {};
  std::vector<char> in_train(class_names.size(), 0);
  std::vector<char> in_validation(class_names.size(), 0);
  for (std::int64_t row : train) in_train[static_cast<std::size_t>(labels[static_cast<std::size_t>(row)])] = 1;
  for (std::int64_t row : validation) in_validation[static_cast<std::size_t>(labels[static_cast<std::size_t>(row)])] = 1;
  for (std::size_t k = 0; k < class_names.size(); ++k) {
    if (in_train[k] != 0 && in_validation[k] == 0) return class_names[k];
  }
  return {};
}

// Names and sizes of every state array a chain will checkpoint: the template the run
// file creates its checkpoint datasets from.
Result<NamedArrays> state_template(const PreparedRun& p) {
  Result<std::unique_ptr<Sampler>> sampler =
      Sampler::create(p.settings.sampler, p.layout.num_params, p.rows.x.cols(), 0);
  if (!sampler.ok()) return sampler.status();
  NamedArrays state = (*sampler)->save_state();
  Result<std::unique_ptr<TablePotential>> potential = TablePotential::create(
      p.rows, p.layout, p.spec.prior, potential_settings_of(p.settings), p.settings.batches, 0);
  if (!potential.ok()) return potential.status();
  if (p.settings.chains.early_stop.every > 0) {
    NamedArrays early = early_stop_state_template(p.layout.num_params);
    state.floats.merge(early.floats);
    state.doubles.merge(early.doubles);
    state.words.merge(early.words);
  }
  NamedArrays model;
  (*potential)->save_state(model);
  for (auto& [name, values] : model.floats) state.floats[std::string(kModelStatePrefix) + name] = values;
  for (auto& [name, values] : model.doubles) state.doubles[std::string(kModelStatePrefix) + name] = values;
  for (auto& [name, values] : model.words) state.words[std::string(kModelStatePrefix) + name] = values;
  return state;
}

}  // namespace

ProbeSet gather_probe(const Eigen::MatrixXf& x, const std::vector<std::int32_t>& labels,
                      const std::vector<std::int64_t>& rows) {
  TrainingRows gathered = gather_training_rows(x, labels, rows);
  return ProbeSet{std::move(gathered.x), std::move(gathered.labels)};
}

PotentialSettings potential_settings_of(const TrainSettings& s) {
  PotentialSettings settings;
  settings.temperature = s.sampler.temperature;
  settings.tempering = s.tempering;
  // Samplers draw the precisions (hmc and rhmc between trajectories).
  settings.learn_prior_scale = is_sampler(s.sampler.method);
  // Optimizers learn it by evidence maximisation instead (docs/methods.md section 15).
  settings.evidence_prior_scale = !is_sampler(s.sampler.method);
  settings.full_batch_steps =
      s.sampler.method == Method::kHmc || s.sampler.method == Method::kRhmc;
  return settings;
}

Result<PreparedRun> prepare_new_run(const TrainRequest& request) {
  PreparedRun p;
  p.settings = request.settings;
  // DESIGN.md section 7: refuse what would not fit before allocating it.
  Result<MemoryLimit> limit = memory_limit_from_flag(request.max_memory);
  if (!limit.ok()) return limit.status();
  const std::uint64_t file_bytes = file_bytes_or_zero(request.data_path);
  CREDENCE_RETURN_IF_ERROR(check_memory(
      fmt::format("{}: reading a table of {} bytes", request.data_path, file_bytes),
      estimate_table_bytes(file_bytes), *limit));
  Result<Dataset> data = load_dataset(request.data_path, request.data);
  if (!data.ok()) return data.status();
  Result<std::string> digest = file_sha256_hex(request.data_path);
  if (!digest.ok()) return digest.status();

  PriorSpec prior;
  prior.learn_scale = request.prior_scale_auto;
  if (!request.prior_scale_auto) prior.weight_scale = request.prior_scale;
  Result<NetSpec> spec = request.net_path.empty()
                             ? net_spec_from_options(request.hidden, request.activation, prior)
                             : read_net_file(request.net_path);
  if (!spec.ok()) return spec.status();
  p.spec = *spec;
  if (request.net_path.empty()) p.spec.linear_path = request.linear_path && !p.spec.hidden.empty();
  const auto classes = static_cast<Index>(data->preprocessing.class_names.size());
  Result<ParamLayout> layout = resolve_layout(p.spec, data->x.rows(), classes);
  if (!layout.ok()) return layout.status();
  p.layout = *layout;
  {
    TrainMemoryInputs in;
    in.data_file_bytes = file_bytes;
    in.parameters = static_cast<std::uint64_t>(p.layout.num_params);
    in.chains = static_cast<std::uint64_t>(std::max(1, p.settings.chains.chains));
    in.samples_in_memory =
        in.chains * static_cast<std::uint64_t>(std::min<std::int64_t>(
                        std::max<std::int64_t>(p.settings.chains.samples, 1), 64));
    in.batch_rows = static_cast<std::uint64_t>(std::max<std::int64_t>(1, p.settings.batches.batch_rows));
    Index widest = std::max<Index>(data->x.rows(), classes);
    for (const HiddenLayerSpec& layer : p.spec.hidden) widest = std::max<Index>(widest, layer.width);
    in.widest_layer = static_cast<std::uint64_t>(widest);
    in.layers = static_cast<std::uint64_t>(p.layout.layers.size());
    Result<std::uint64_t> estimate = estimate_train_bytes(in);
    if (!estimate.ok()) return estimate.status();
    CREDENCE_RETURN_IF_ERROR(check_memory(
        fmt::format("training {} parameters x {} chains on {}", p.layout.num_params,
                    in.chains, request.data_path),
        *estimate, *limit));
  }

  p.rows = gather_training_rows(data->x, data->labels, data->split.train);
  if (request.budget_given) {
    const std::string chosen = size_budget(p.settings, p.rows.x.cols(), *request.budget_given);
    if (!chosen.empty()) log().info("{}", chosen);
    const std::string moved = size_max_move(p.settings, p.rows.x.cols(), *request.budget_given);
    if (!moved.empty()) log().info("{}", moved);
    const std::string rate = size_learning_rate(p.settings, p.rows.x.cols(), *request.budget_given);
    if (!rate.empty()) log().info("{}", rate);
  }
  if (p.layout.num_params > kParametersPerRowWarning * p.rows.x.cols()) {
    warn_once(fmt::format("{} parameters for {} training rows ({:.0f} per row, more than {}): the "
                          "prior, not the data, decides most weights; a smaller network "
                          "(--hidden) or more rows is safer", p.layout.num_params,
                          p.rows.x.cols(), static_cast<double>(p.layout.num_params) /
                          static_cast<double>(p.rows.x.cols()), kParametersPerRowWarning));
  }
  shape_optimizer_chains(p.settings, p.rows.x.cols());
  if (request.budget_given) {
    const std::string off = size_early_stop(
        p.settings, p.rows.x.cols(), static_cast<std::int64_t>(data->split.validation.size()),
        *request.budget_given, class_missing_from(data->labels, data->split.train,
                                                  data->split.validation,
                                                  data->preprocessing.class_names));
    if (!off.empty()) log().info("{}", off);
  }
  if (p.settings.chains.early_stop.every > 0) {
    p.held_out = gather_training_rows(data->x, data->labels, held_out_rows(data->split.validation));
  }
  // Starting points draw from their own purpose's streams, so the run seed serves.
  if (p.settings.init_seed == 0) p.settings.init_seed = p.settings.chains.seed;

  RunHeader& h = p.header;
  h.tool_version = kVersion;
  h.command_line = request.command_line;
  h.created_utc = utc_now();
  h.data_file = request.data_path;
  h.data_sha256 = *digest;
  h.data_rows = data->table.rows();
  h.train_rows = data->split.train;
  h.val_rows = data->split.validation;
  h.test_rows = data->split.test;
  h.preprocessing = data->preprocessing;
  h.net_text = format_net_spec(p.spec);
  h.parameters = p.layout.num_params;
  h.settings = to_values(p.settings, request.data);
  h.chains = p.settings.chains.chains;
  h.samples_per_chain = p.settings.chains.samples;
  h.probe_rows = choose_probe_rows(data->split.validation, data->split.train,
                                   p.settings.probe_rows);
  h.projections = p.settings.projections;
  h.layers = static_cast<int>(p.layout.layers.size());
  p.probe = gather_probe(data->x, data->labels, h.probe_rows);
  h.probe_labels = p.probe.labels;
  Result<NamedArrays> state = state_template(p);
  if (!state.ok()) return state.status();
  h.state_template = *state;
  return p;
}

}  // namespace credence
