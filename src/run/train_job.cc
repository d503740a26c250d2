// run_train: prepare data and network, run the chains, and feed the run file from one
// writer thread.
//
// Threads: OpenMP runs the chains; their hooks (serialised by run_chains) only copy
// into a queue. One writer thread drains the queue every flush interval, computes the
// tracked summaries, appends rows, commits the run file, asks the chains for fresh
// checkpoints and reports progress (TrainHooks). Nothing else touches HDF5.
#include "credence/train.h"

#include "credence/held_out.h"

#include <fmt/chrono.h>
#include <fmt/format.h>

#include <chrono>
#include <condition_variable>
#include <ctime>
#include <mutex>
#include <numeric>
#include <thread>
#include <variant>

#ifdef CREDENCE_HAVE_MPI
#include "run/mpi_wire.h"
#include "run/mpi_world.h"
#endif
#include "credence/ensemble.h"
#include "credence/summaries.h"
#include "credence/table_potential.h"
#include "credence/version.h"
#include "run/chain_message.h"
#include "util/log.h"
#include "util/memory_guard.h"
#include "util/warn_once.h"
#include "util/rng.h"

#ifdef CREDENCE_HAVE_BLAS
extern "C" void openblas_set_num_threads(int);
#endif

namespace credence {
namespace {

// Everything a run needs, whether freshly started or resumed.
struct Prepared {
  RunHeader header;
  NetSpec spec;
  ParamLayout layout;
  TrainingRows rows;
  TrainingRows held_out;  // validation rows early stopping scores (empty when it is off)
  ProbeSet probe;
  TrainSettings settings;
};

// A network with this many times more parameters than training rows leans on its prior.
constexpr std::int64_t kParametersPerRowWarning = 10;

// Hands TrainHooks::progress where the run stands: once at the start, at most every
// kInterval while the chains run, and once when they have ended.
class ProgressReport {
 public:
  ProgressReport(const TrainHooks& hooks, std::string label, std::int64_t total_steps,
                 std::int64_t total_samples, std::int64_t steps_done, std::int64_t kept)
      : report_(hooks.progress) {
    now_.label = std::move(label);
    now_.total_steps = total_steps;
    now_.total_samples = total_samples;
    now_.steps_done = steps_done;
    now_.kept = kept;
    if (report_) report_(now_);
    last_ = std::chrono::steady_clock::now();
  }
  void update(std::int64_t steps_done, std::int64_t kept, double loss) {
    if (!report_) return;
    const auto now = std::chrono::steady_clock::now();
    if (now - last_ < kInterval) return;
    last_ = now;
    now_.steps_done = steps_done;
    now_.kept = kept;
    now_.loss = loss;
    report_(now_);
  }
  void finish(std::int64_t steps_done, std::int64_t kept) {
    if (!report_) return;
    now_.steps_done = steps_done;
    now_.kept = kept;
    now_.finished = true;
    report_(now_);
  }

 private:
  static constexpr std::chrono::duration<double> kInterval{0.2};
  const std::function<void(const TrainProgress&)>& report_;
  TrainProgress now_;
  std::chrono::steady_clock::time_point last_;
};

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
  // Optimizers learn it by evidence maximisation instead (METHODS.md section 15).
  settings.evidence_prior_scale = !is_sampler(s.sampler.method);
  settings.full_batch_steps =
      s.sampler.method == Method::kHmc || s.sampler.method == Method::kRhmc;
  return settings;
}

// Names and sizes of every state array a chain will checkpoint: the template the run
// file creates its checkpoint datasets from.
Result<NamedArrays> state_template(const Prepared& p) {
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

Result<Prepared> prepare_new(const TrainRequest& request) {
  Prepared p;
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
    in.layers = static_cast<std::uint64_t>(p.spec.hidden.size() + 1);
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
    size_early_stop(p.settings, p.rows.x.cols(),
                    static_cast<std::int64_t>(data->split.validation.size()), *request.budget_given);
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
  Result<NamedArrays> state = state_template(p);
  if (!state.ok()) return state.status();
  h.state_template = *state;
  return p;
}

// Rebuilds the prepared run from a run file's header and the data file it names.
Result<Prepared> prepare_resume(const RunHeader& header, const std::string& data_override) {
  Prepared p;
  p.header = header;
  ReadOptions read;
  CREDENCE_RETURN_IF_ERROR(from_values(header.settings, p.settings, read));
  // The stored settings are untrusted input like the rest of the file (issue 22).
  if (Status s = validate_train_settings(p.settings); !s.ok()) {
    return Status::corrupt("the run file's stored settings (/settings): " + s.message() +
                           "; the file is damaged or was not written by credence");
  }
  const std::string path = data_override.empty() ? header.data_file : data_override;
  Result<std::string> digest = file_sha256_hex(path);
  if (!digest.ok()) return digest.status();
  if (*digest != header.data_sha256) {
    return Status::invalid_input(fmt::format(
        "{}: this is not the data the run started with (SHA-256 {} differs from the stored "
        "{}); give the original file as DATA.csv", path, *digest, header.data_sha256));
  }
  read.text_columns = text_columns_of(header.preprocessing);
  Result<Table> table = read_table(path, read);
  if (!table.ok()) return table.status();
  Result<Eigen::MatrixXf> x = transform_table(header.preprocessing, *table);
  if (!x.ok()) return x.status();
  Result<std::vector<std::int32_t>> labels = encode_labels(header.preprocessing, *table);
  if (!labels.ok()) return labels.status();
  Result<NetSpec> spec = parse_net_text(header.net_text, "net text stored in the run file");
  if (!spec.ok()) return spec.status();
  p.spec = *spec;
  Result<ParamLayout> layout = resolve_layout(
      p.spec, header.preprocessing.input_width,
      static_cast<Index>(header.preprocessing.class_names.size()));
  if (!layout.ok()) return layout.status();
  p.layout = *layout;
  p.rows = gather_training_rows(*x, *labels, header.train_rows);
  if (p.settings.chains.early_stop.every > 0) {
    p.held_out = gather_training_rows(*x, *labels, held_out_rows(header.val_rows));
  }
  p.probe = gather_probe(*x, *labels, header.probe_rows);
  return p;
}

using Message = ChainMessage;

ChainStatus chain_status_of(const std::optional<ChainEnd>& end) {
  if (!end) return ChainStatus::kRunning;
  switch (*end) {
    case ChainEnd::kCompleted: return ChainStatus::kCompleted;
    case ChainEnd::kDiverged: return ChainStatus::kDiverged;
    case ChainEnd::kStopped: return ChainStatus::kStopped;
    case ChainEnd::kFailed: return ChainStatus::kFailed;
  }
  return ChainStatus::kFailed;
}

// The single thread that talks to HDF5 (see the file comment).
class WriterThread {
 public:
  // `next_steps` holds each chain's first step still to run (0 for a fresh run).
  WriterThread(RunWriter& writer, SampleSummarizer& summarizer, ProgressReport& progress,
               double flush_seconds, std::int64_t rows, std::vector<std::int64_t> next_steps,
               std::int64_t kept_at_start)
      : writer_(writer),
        summarizer_(summarizer),
        summary_(summarizer.make_summary()),
        progress_(progress),
        flush_interval_(std::chrono::duration<double>(std::max(0.05, flush_seconds))),
        rows_(static_cast<double>(rows)),
        next_steps_(std::move(next_steps)),
        kept_(kept_at_start),
        thread_([this] { loop(); }) {}

  ~WriterThread() { (void)stop(); }

  void push(Message message) {
    std::lock_guard<std::mutex> lock(mutex_);
    queue_.push_back(std::move(message));
  }

  const std::atomic<std::uint64_t>& checkpoint_request() const { return checkpoint_request_; }

  /// Drains what is queued, commits, and ends the thread. Returns the first error.
  Status stop() {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      stopping_ = true;
    }
    wake_.notify_one();
    if (thread_.joinable()) thread_.join();
    return status_;
  }

  std::int64_t steps_done() const {
    return std::accumulate(next_steps_.begin(), next_steps_.end(), std::int64_t{0});
  }
  std::int64_t kept() const { return kept_; }

 private:
  void loop() {
    std::vector<Message> batch, later;
    for (;;) {
      bool last = false;
      {
        std::unique_lock<std::mutex> lock(mutex_);
        // Wake often enough for a lively progress line; commit at the flush interval.
        wake_.wait_for(lock, std::min(flush_interval_, kRedrawInterval),
                       [this] { return stopping_; });
        // Messages held back last round come first: order within a chain is kept.
        later.insert(later.end(), std::make_move_iterator(queue_.begin()),
                     std::make_move_iterator(queue_.end()));
        queue_.clear();
        batch.swap(later);
        last = stopping_;
      }
      // A chain's rows are committed only together with a state that follows them, so
      // the run file never holds a row its stored state would produce again on resume.
      // Rows after a chain's latest state wait for the next round.
      std::vector<std::size_t> last_state(next_steps_.size(), 0);
      std::vector<bool> has_state(next_steps_.size(), false);
      for (std::size_t i = 0; i < batch.size(); ++i) {
        if (const auto* state = std::get_if<ChainState>(&batch[i])) {
          last_state[static_cast<std::size_t>(state->chain)] = i;
          has_state[static_cast<std::size_t>(state->chain)] = true;
        }
      }
      for (std::size_t i = 0; i < batch.size(); ++i) {
        const auto chain = static_cast<std::size_t>(chain_of(batch[i]));
        if (has_state[chain] && i <= last_state[chain]) {
          if (status_.ok()) status_ = write(batch[i]);
        } else {
          later.push_back(std::move(batch[i]));
        }
      }
      batch.clear();
      const auto now = std::chrono::steady_clock::now();
      if (last || now - last_commit_ >= flush_interval_) {
        if (status_.ok()) status_ = writer_.commit();
        last_commit_ = now;
        // Ask every chain for a fresh checkpoint, to be committed on the next round.
        checkpoint_request_.fetch_add(1, std::memory_order_relaxed);
      }
      progress_.update(steps_done(), kept_, last_loss_);
      if (last) return;
    }
  }

  static int chain_of(const Message& message) {
    return std::visit([](const auto& m) { return m.chain; }, message);
  }

  Status write(Message& message) {
    if (auto* trace = std::get_if<TraceRecord>(&message)) {
      next_steps_[static_cast<std::size_t>(trace->chain)] = trace->step + 1;
      last_loss_ = trace->potential / rows_;
      return writer_.append_trace(*trace);
    }
    if (auto* sample = std::get_if<SampleMessage>(&message)) {
      CREDENCE_RETURN_IF_ERROR(summarizer_.summarize(sample->theta, summary_));
      ++kept_;
      SampleRecord record;
      record.chain = sample->chain;
      record.step = sample->step;
      record.index = sample->index;
      record.theta = {sample->theta.data(), static_cast<std::size_t>(sample->theta.size())};
      record.probe_log_lik = summary_.probe_log_lik;
      record.probe_prob = {summary_.probe_prob.data(),
                           static_cast<std::size_t>(summary_.probe_prob.size())};
      record.projections = {summary_.projections.data(),
                            static_cast<std::size_t>(summary_.projections.size())};
      record.layer_sq_norms = {summary_.layer_sq_norms.data(),
                               static_cast<std::size_t>(summary_.layer_sq_norms.size())};
      record.prior_precision = sample->prior_precision;
      return writer_.append_sample(record);
    }
    return writer_.set_chain_state(std::move(std::get<ChainState>(message)));
  }

  RunWriter& writer_;
  SampleSummarizer& summarizer_;
  SampleSummary summary_;
  ProgressReport& progress_;
  static constexpr std::chrono::duration<double> kRedrawInterval{0.25};
  std::chrono::duration<double> flush_interval_;
  std::chrono::steady_clock::time_point last_commit_ = std::chrono::steady_clock::now();
  double rows_;
  std::vector<std::int64_t> next_steps_;  // (C) progress per chain, from the traces
  std::int64_t kept_;
  double last_loss_ = std::nan("");
  std::atomic<std::uint64_t> checkpoint_request_{0};
  std::mutex mutex_;
  std::condition_variable wake_;
  std::vector<Message> queue_;
  bool stopping_ = false;
  Status status_;
  std::thread thread_;  // last: starts after every member above exists
};

// Turns a stored chain state back into the driver's checkpoint.
ChainCheckpoint checkpoint_of(const ChainState& state) {
  ChainCheckpoint c;
  c.chain = state.chain;
  c.next_step = state.next_step;
  c.kept = state.kept;
  c.seconds = state.seconds;
  c.gradient_evals = state.gradient_evals;
  c.theta = Eigen::Map<const Eigen::VectorXf>(state.theta.data(),
                                              static_cast<Eigen::Index>(state.theta.size()));
  c.state = state.state;
  return c;
}

ChainState state_of(const ChainCheckpoint& c) {
  ChainState s;
  s.chain = c.chain;
  s.next_step = c.next_step;
  s.kept = c.kept;
  s.seconds = c.seconds;
  s.gradient_evals = c.gradient_evals;
  s.theta.assign(c.theta.data(), c.theta.data() + c.theta.size());
  s.state = c.state;
  s.status = chain_status_of(c.end);
  s.reason = c.reason;
  return s;
}

// The potential factory and the starting points: both depend on (seed, global chain
// index) only, so a chain gives the same samples in whichever process runs it.
PotentialFactory factory_of(const Prepared& p) {
  return [&p](int chain) -> std::unique_ptr<PotentialFn> {
    const TrainSettings& s = p.settings;
    // The batch order of chain c depends on (seed, c) only, not on thread timing.
    auto potential = TablePotential::create(
        p.rows, p.layout, p.spec.prior, potential_settings_of(s), s.batches,
        stream_seed(s.chains.seed, SeedPurpose::kBatches, static_cast<std::uint64_t>(chain)));
    return potential.ok() ? std::move(*potential) : nullptr;
  };
}

// The chain layout with early stopping's scorer attached (it reads p.held_out).
ChainSettings chain_settings_of(const Prepared& p) {
  ChainSettings chains = p.settings.chains;
  if (chains.early_stop.every > 0) chains.early_stop.scorer = held_out_nll(p.layout, p.held_out);
  return chains;
}

InitFn init_of(const Prepared& p) {
  return [&p](int chain, ThetaRef theta) {
    Eigen::VectorXf start(theta.size());
    initialize_params<float>(start, p.layout,
                             stream_seed(p.settings.init_seed, SeedPurpose::kInit,
                                         static_cast<std::uint64_t>(chain)));
    theta = start;
    return Status::ok_status();
  };
}

// Hooks that hand every message to `push` (called under run_chains' hook mutex).
ChainHooks hooks_into(const std::function<void(Message)>& push) {
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

// How the run ended, from every chain's end; `failure` is the first failed chain's
// status, `continue_with` the command that resumes the run.
struct Verdict {
  RunStatus status = RunStatus::kComplete;
  Status result;
};

Verdict verdict_of(int chains, int stopped, int failed, int diverged, const Status& failure,
                   const TrainSettings& s, const std::string& run_path,
                   const std::string& continue_with) {
  if (stopped > 0) {
    return {RunStatus::kInterrupted,
            Status::interrupted(fmt::format(
                "interrupted; every kept sample is in {}. Continue with: {}", run_path,
                continue_with))};
  }
  if (failed > 0) return {RunStatus::kFailed, failure};
  if (diverged == chains) {
    return {RunStatus::kDiverged,
            Status::diverged(fmt::format(
                "every chain diverged; try a step size ten times smaller (--lr {:g})",
                s.sampler.learning_rate / 10))};
  }
  return {};
}

std::int64_t accumulate(const std::vector<std::int64_t>& values) {
  return std::accumulate(values.begin(), values.end(), std::int64_t{0});
}

std::int64_t steps_per_chain_of(const TrainSettings& s) {
  return s.chains.burn_in + s.chains.thin * s.chains.samples;
}

// Each chain's next step and the samples kept so far, from the resume list.
std::vector<std::int64_t> next_steps_of(const std::vector<ChainCheckpoint>& resume, int chains,
                                        std::int64_t& kept) {
  std::vector<std::int64_t> next_steps(static_cast<std::size_t>(chains), 0);
  kept = 0;
  for (std::size_t c = 0; c < resume.size() && c < next_steps.size(); ++c) {
    next_steps[c] = resume[c].next_step;
    kept += resume[c].kept;
  }
  return next_steps;
}

Status run_chains_into(Prepared& p, RunWriter& writer, const std::string& run_path,
                       std::vector<ChainCheckpoint> resume, const TrainHooks& train_hooks) {
  const TrainSettings& s = p.settings;
  std::int64_t kept = 0;
  std::vector<std::int64_t> next_steps = next_steps_of(resume, s.chains.chains, kept);
  Result<SampleSummarizer> summarizer =
      SampleSummarizer::create(p.layout, p.probe, s.projections, s.summary_seed);
  if (!summarizer.ok()) return summarizer.status();
  ProgressReport progress(train_hooks, fmt::format("train {}", method_name(s.sampler.method)),
                          steps_per_chain_of(s) * s.chains.chains,
                          s.chains.samples * s.chains.chains, accumulate(next_steps), kept);
  WriterThread writer_thread(writer, *summarizer, progress, s.flush_seconds, p.rows.x.cols(),
                             next_steps, kept);
  const ChainHooks hooks = hooks_into([&](Message m) { writer_thread.push(std::move(m)); });

  RunControl control{.stop = train_hooks.stop,
                     .checkpoint_request = &writer_thread.checkpoint_request()};
  Result<RunOutcome> outcome = run_chains(s.sampler, chain_settings_of(p), p.layout.num_params,
                                          factory_of(p), init_of(p), hooks, control, resume);
  Status written = writer_thread.stop();
  progress.finish(writer_thread.steps_done(), writer_thread.kept());
  if (!outcome.ok()) {
    (void)writer.finish(RunStatus::kFailed);
    return outcome.status();
  }
  if (!written.ok()) return written.with_context("writing the run file");

  int diverged = 0, stopped = 0, failed = 0;
  for (const ChainOutcome& chain : outcome->chains) {
    diverged += chain.end == ChainEnd::kDiverged;
    stopped += chain.end == ChainEnd::kStopped;
    failed += chain.end == ChainEnd::kFailed;  // run_chains() has logged each one already
  }
  const Verdict verdict =
      verdict_of(static_cast<int>(outcome->chains.size()), stopped, failed, diverged,
                 outcome->status, s, run_path, "credence train --resume " + run_path);
  CREDENCE_RETURN_IF_ERROR(writer.finish(verdict.status));
  return verdict.result;
}

#ifdef CREDENCE_HAVE_MPI
// ---- Under mpirun: chains spread over ranks, rank 0 the only writer ----------------
//
// Rank r runs global chains r, r + R, r + 2R, ... with its own OpenMP threads, on a
// chain thread; the process's main thread alone talks MPI (MPI_THREAD_FUNNELED).
// Workers send their chains' messages to rank 0, whose main thread feeds them to the
// same WriterThread a local run uses, so rows and states commit exactly as locally.
// Rank 0 forwards the writer's checkpoint requests and any stop to every worker.

std::vector<int> chains_of_rank(int chains, int rank, int ranks) {
  std::vector<int> ids;
  for (int c = rank; c < chains; c += ranks) ids.push_back(c);
  return ids;
}

// What a rank's own chains produce, waiting for its MPI thread.
class Outbox {
 public:
  void push(Message message) {
    std::lock_guard<std::mutex> lock(mutex_);
    messages_.push_back(std::move(message));
  }
  void take(std::vector<Message>& into) {
    std::lock_guard<std::mutex> lock(mutex_);
    into.swap(messages_);
    messages_.clear();
  }

 private:
  std::mutex mutex_;
  std::vector<Message> messages_;
};

// One rank's share of the chains, run on their own thread.
class ChainThread {
 public:
  ChainThread(const Prepared& p, const std::vector<int>& ids, std::vector<ChainCheckpoint> resume,
              ChainHooks hooks, RunControl control)
      : p_(p), hooks_(std::move(hooks)), control_(control), resume_(std::move(resume)) {
    chains_ = chain_settings_of(p);
    chains_.chains = static_cast<int>(ids.size());
    chains_.chain_ids = ids;
    if (ids.empty()) {
      finished_ = true;
      return;
    }
    thread_ = std::thread([this] {
      Result<RunOutcome> run = run_chains(p_.settings.sampler, chains_, p_.layout.num_params,
                                          factory_of(p_), init_of(p_), hooks_, control_, resume_);
      if (run.ok()) {
        outcome_ = std::move(*run);
      } else {
        failure_ = run.status();
      }
      finished_.store(true, std::memory_order_release);
    });
  }
  ~ChainThread() { join(); }

  bool finished() const { return finished_.load(std::memory_order_acquire); }
  void join() {
    if (thread_.joinable()) thread_.join();
  }
  /// After join(): how each chain ended, and a failure of the whole share.
  std::vector<wire::ChainEnding> endings() const {
    std::vector<wire::ChainEnding> out;
    for (const ChainOutcome& c : outcome_.chains) {
      out.push_back({c.checkpoint.chain, c.end, c.status, c.step, c.reason});
    }
    return out;
  }
  const Status& failure() const { return failure_; }

 private:
  const Prepared& p_;
  ChainSettings chains_;
  ChainHooks hooks_;
  RunControl control_;
  std::vector<ChainCheckpoint> resume_;
  RunOutcome outcome_;
  Status failure_;
  std::atomic<bool> finished_{false};
  std::thread thread_;
};

bool stop_requested(const TrainHooks& hooks) {
  return hooks.stop != nullptr && hooks.stop->load(std::memory_order_relaxed);
}

void sleep_briefly() { std::this_thread::sleep_for(std::chrono::milliseconds(2)); }

// The job every rank runs: settings, network and encoded training rows from rank 0, so
// every rank trains on exactly what rank 0 prepared, plus every chain's resume state.
void put_job(wire::Packer& out, const Prepared& p, const std::vector<ChainState>& states) {
  wire::put_settings(out, p.header.settings);
  out.put_string(p.header.net_text);
  out.put(static_cast<std::int64_t>(p.header.preprocessing.input_width));
  out.put(static_cast<std::int64_t>(p.header.preprocessing.class_names.size()));
  out.put(static_cast<std::int32_t>(p.header.chains));
  out.put(static_cast<std::int64_t>(p.rows.x.rows()));
  out.put(static_cast<std::int64_t>(p.rows.x.cols()));
  const auto* bytes = reinterpret_cast<const char*>(p.rows.x.data());
  out.bytes().insert(out.bytes().end(), bytes,
                     bytes + static_cast<std::size_t>(p.rows.x.size()) * sizeof(float));
  out.put_vector(p.rows.labels);
  out.put(static_cast<std::int64_t>(p.held_out.x.cols()));
  const auto* held = reinterpret_cast<const char*>(p.held_out.x.data());
  out.bytes().insert(out.bytes().end(), held,
                     held + static_cast<std::size_t>(p.held_out.x.size()) * sizeof(float));
  out.put_vector(p.held_out.labels);
  out.put(static_cast<std::uint64_t>(states.size()));
  for (const ChainState& state : states) wire::put_chain_state(out, state);
}

Status get_job(wire::Unpacker& in, Prepared& p, std::vector<ChainState>& states) {
  const Status garbled = Status::internal("the job from rank 0 arrived garbled");
  std::int64_t width = 0, classes = 0, rows = 0, cols = 0;
  std::int32_t chains = 0;
  if (!wire::get_settings(in, p.header.settings) || !in.get_string(p.header.net_text) ||
      !in.get(width) || !in.get(classes) || !in.get(chains) || !in.get(rows) || !in.get(cols)) {
    return garbled;
  }
  std::vector<float> x(static_cast<std::size_t>(rows * cols));
  for (float& v : x) {
    if (!in.get(v)) return garbled;
  }
  p.rows.x = Eigen::Map<const Eigen::MatrixXf>(x.data(), rows, cols);
  std::int64_t held_cols = 0;
  if (!in.get_vector(p.rows.labels) || !in.get(held_cols) || held_cols < 0) return garbled;
  std::vector<float> held(static_cast<std::size_t>(rows * held_cols));
  for (float& v : held) {
    if (!in.get(v)) return garbled;
  }
  p.held_out.x = Eigen::Map<const Eigen::MatrixXf>(held.data(), rows, held_cols);
  std::uint64_t count = 0;
  if (!in.get_vector(p.held_out.labels) || !in.get(count)) return garbled;
  states.resize(static_cast<std::size_t>(count));
  for (ChainState& state : states) {
    if (!wire::get_chain_state(in, state)) return garbled;
  }
  if (!in.done()) return garbled;
  p.header.chains = chains;
  ReadOptions read;
  CREDENCE_RETURN_IF_ERROR(from_values(p.header.settings, p.settings, read));
  Result<NetSpec> spec = parse_net_text(p.header.net_text, "net text from rank 0");
  if (!spec.ok()) return spec.status();
  p.spec = *spec;
  Result<ParamLayout> layout =
      resolve_layout(p.spec, static_cast<Index>(width), static_cast<Index>(classes));
  if (!layout.ok()) return layout.status();
  p.layout = *layout;
  return Status::ok_status();
}

// Rank 0 opens the run: for --resume the file and the data it names, for a new run only
// the data's path and digest (nothing is written before every rank agrees on the data).
Status open_on_root(const TrainRequest& request, std::unique_ptr<RunWriter>& writer,
                    Prepared& p, std::vector<ChainState>& states, std::string& data_path,
                    std::string& digest) {
  if (request.resume_path.empty()) {
    data_path = request.data_path;
    if (data_path.empty()) return Status::invalid_input("give the data file: credence train DATA.csv ...");
    Result<std::string> d = file_sha256_hex(data_path);
    if (!d.ok()) return d.status();
    digest = *d;
    return Status::ok_status();
  }
  Result<std::unique_ptr<RunWriter>> reopened = RunWriter::reopen(request.resume_path, states);
  if (!reopened.ok()) return reopened.status();
  writer = std::move(*reopened);
  Result<Prepared> prepared = prepare_resume(writer->header(), request.data_path);
  if (!prepared.ok()) return prepared.status();
  p = std::move(*prepared);
  data_path = request.data_path.empty() ? p.header.data_file : request.data_path;
  digest = p.header.data_sha256;
  log().info("resuming {} chains from {}", states.size(), request.resume_path);
  return Status::ok_status();
}

// Every rank hashes its own copy of the data and compares with rank 0's digest.
Status check_same_data(const mpi::World& world, const TrainRequest& request,
                       const std::string& root_path, const std::string& root_digest) {
  if (world.rank() == 0) return Status::ok_status();
  const std::string path = request.data_path.empty() ? root_path : request.data_path;
  Result<std::string> digest = file_sha256_hex(path);
  if (!digest.ok()) return digest.status();
  if (*digest != root_digest) {
    return Status::invalid_input(fmt::format(
        "{}: SHA-256 {} differs from rank 0's {} ({}); every rank must read the same data "
        "file: copy it to the same path on every host",
        path, *digest, root_digest, root_path));
  }
  return Status::ok_status();
}

void send_control(const mpi::World& world, bool stop, std::uint64_t generation) {
  wire::Packer out;
  out.put(static_cast<std::uint8_t>(stop));
  out.put(generation);
  for (int r = 1; r < world.size(); ++r) world.send(r, mpi::kTagControl, out.bytes());
}

// Rank 0: its own chains, the writer, and everything the workers send.
Status run_root(const mpi::World& world, Prepared& p, RunWriter& writer,
                const std::string& run_path, std::vector<ChainCheckpoint> resume_all,
                const TrainHooks& hooks) {
  const TrainSettings& s = p.settings;
  const int chains = s.chains.chains;
  std::int64_t kept = 0;
  std::vector<std::int64_t> next_steps = next_steps_of(resume_all, chains, kept);
  Result<SampleSummarizer> summarizer =
      SampleSummarizer::create(p.layout, p.probe, s.projections, s.summary_seed);
  if (!summarizer.ok()) return summarizer.status();
  ProgressReport progress(hooks, fmt::format("train {} ({} ranks)", method_name(s.sampler.method),
                                             world.size()),
                          steps_per_chain_of(s) * chains, s.chains.samples * chains,
                          accumulate(next_steps), kept);
  WriterThread writer_thread(writer, *summarizer, progress, s.flush_seconds, p.rows.x.cols(),
                             next_steps, kept);
  const std::vector<int> ids = chains_of_rank(chains, 0, world.size());
  std::vector<ChainCheckpoint> resume;
  for (int id : ids) {
    if (!resume_all.empty()) resume.push_back(std::move(resume_all[static_cast<std::size_t>(id)]));
  }
  std::atomic<bool> stop{false};
  ChainThread own(p, ids,  std::move(resume),
                  hooks_into([&](Message m) { writer_thread.push(std::move(m)); }),
                  RunControl{.stop = &stop,
                             .checkpoint_request = &writer_thread.checkpoint_request()});

  std::vector<wire::ChainEnding> endings;
  std::vector<int> ending_rank;
  Status rank_failure;
  int stopped_first = -1;  // the rank whose chains stopped first
  int done = 0;
  bool stop_sent = false;
  std::uint64_t forwarded = 0;
  auto stop_everyone = [&] {
    stop.store(true, std::memory_order_relaxed);
    if (!stop_sent) send_control(world, true, forwarded);
    stop_sent = true;
  };
  std::vector<char> bytes;
  for (;;) {
    bool busy = false;
    int from = 0, tag = 0;
    while (world.poll(from, tag, bytes)) {
      busy = true;
      wire::Unpacker in(bytes.data(), bytes.size());
      if (tag == mpi::kTagData) {
        std::uint64_t n = 0;
        in.get(n);
        for (std::uint64_t i = 0; i < n; ++i) {
          Message m;
          if (!wire::get_message(in, m)) break;
          writer_thread.push(std::move(m));
        }
        if (!in.done() && rank_failure.ok()) {
          rank_failure = Status::internal(world.who(from) + ": chain messages arrived garbled");
          stop_everyone();
        }
      } else if (tag == mpi::kTagDone) {
        ++done;
        Status failure;
        std::uint64_t n = 0;
        wire::get_status(in, failure);
        in.get(n);
        for (std::uint64_t i = 0; i < n; ++i) {
          wire::ChainEnding e;
          if (!wire::get_ending(in, e)) break;
          if (e.end == ChainEnd::kStopped && stopped_first < 0) stopped_first = from;
          endings.push_back(std::move(e));
          ending_rank.push_back(from);
        }
        if (!failure.ok() && rank_failure.ok()) {
          rank_failure = Status(failure.code(), world.who(from) + ": " + failure.message());
        }
        if (!failure.ok() || stopped_first >= 0) stop_everyone();
      }
    }
    if (stop_requested(hooks) && !stop_sent) {
      if (stopped_first < 0) stopped_first = 0;
      stop_everyone();
    }
    const std::uint64_t generation =
        writer_thread.checkpoint_request().load(std::memory_order_relaxed);
    if (generation != forwarded) {
      forwarded = generation;
      send_control(world, stop_sent, generation);
    }
    if (own.finished() && done == world.size() - 1) break;
    if (!busy) sleep_briefly();
  }
  own.join();
  if (!own.failure().ok() && rank_failure.ok()) {
    rank_failure = Status(own.failure().code(), world.who(0) + ": " + own.failure().message());
  }
  for (const wire::ChainEnding& e : own.endings()) {
    endings.push_back(e);
    ending_rank.push_back(0);
  }
  Status written = writer_thread.stop();
  progress.finish(writer_thread.steps_done(), writer_thread.kept());

  Verdict verdict;
  const std::string resume_line = fmt::format("mpirun -n {} credence train --resume {}",
                                              world.size(), run_path);
  if (!written.ok()) {
    verdict = {RunStatus::kFailed, written.with_context("writing the run file")};
  } else if (!rank_failure.ok()) {
    // A rank failed as a whole: keep what arrived, resumable.
    verdict = {RunStatus::kInterrupted,
               Status(rank_failure.code() == StatusCode::kInterrupted ? StatusCode::kInternal
                                                                      : rank_failure.code(),
                      fmt::format("{}; every kept sample that arrived is in {}. Continue with: {}",
                                  rank_failure.message(), run_path, resume_line))};
  } else {
    int diverged = 0, stopped = 0, failed = 0;
    Status failure;
    for (std::size_t i = 0; i < endings.size(); ++i) {
      const wire::ChainEnding& e = endings[i];
      diverged += e.end == ChainEnd::kDiverged;
      stopped += e.end == ChainEnd::kStopped;
      failed += e.end == ChainEnd::kFailed;
      if (e.end == ChainEnd::kDiverged) {
        log().warn("chain {} diverged at step {}: {}", e.chain, e.step, e.reason);
      }
      if (e.end == ChainEnd::kFailed && failure.ok()) {
        failure = Status(e.status.code(), fmt::format("{}: chain {}: {}", world.who(ending_rank[i]),
                                                      e.chain, e.status.message()));
      }
    }
    verdict = verdict_of(chains, stopped, failed, diverged, failure, s, run_path, resume_line);
    if (stopped > 0) {
      verdict.result = Status::interrupted(fmt::format(
          "interrupted ({} stopped first); every kept sample is in {}. Continue with: {}",
          world.who(std::max(stopped_first, 0)), run_path, resume_line));
    }
  }
  Status finished = writer.finish(verdict.status);
  if (verdict.result.ok() && !finished.ok()) verdict.result = finished;
  wire::Packer out;
  wire::put_status(out, verdict.result);
  for (int r = 1; r < world.size(); ++r) world.send(r, mpi::kTagFinal, out.bytes());
  return verdict.result;
}

// A worker rank: run its chains, send everything to rank 0, obey its control messages.
Status run_worker(const mpi::World& world, const Prepared& p,
                  const std::vector<ChainState>& states, const TrainHooks& hooks) {
  const std::vector<int> ids = chains_of_rank(p.settings.chains.chains, world.rank(), world.size());
  std::vector<ChainCheckpoint> resume;
  for (int id : ids) {
    if (!states.empty()) resume.push_back(checkpoint_of(states[static_cast<std::size_t>(id)]));
  }
  std::atomic<bool> stop{false};
  std::atomic<std::uint64_t> request{0};
  Outbox outbox;
  ChainThread own(p, ids, std::move(resume),
                  hooks_into([&](Message m) { outbox.push(std::move(m)); }),
                  RunControl{.stop = &stop, .checkpoint_request = &request});
  std::vector<Message> pending;
  std::vector<char> bytes;
  auto send_pending = [&] {
    outbox.take(pending);
    if (pending.empty()) return false;
    wire::Packer out;
    out.put(static_cast<std::uint64_t>(pending.size()));
    for (const Message& m : pending) wire::put_message(out, m);
    world.send(0, mpi::kTagData, out.bytes());
    pending.clear();
    return true;
  };
  Status final_status;
  bool have_final = false;
  auto take_from_root = [&] {
    bool any = false;
    int from = 0, tag = 0;
    while (world.poll(from, tag, bytes)) {
      any = true;
      wire::Unpacker in(bytes.data(), bytes.size());
      if (tag == mpi::kTagControl) {
        std::uint8_t stop_now = 0;
        std::uint64_t generation = 0;
        if (in.get(stop_now) && in.get(generation)) {
          if (stop_now) stop.store(true, std::memory_order_relaxed);
          request.store(generation, std::memory_order_relaxed);
        }
      } else if (tag == mpi::kTagFinal) {
        wire::get_status(in, final_status);
        have_final = true;
      }
    }
    return any;
  };
  for (;;) {
    // Finished is read before the last drain: every hook call precedes it.
    const bool finished = own.finished();
    bool busy = send_pending();
    busy = take_from_root() || busy;
    if (stop_requested(hooks)) stop.store(true, std::memory_order_relaxed);
    if (finished) break;
    if (!busy) sleep_briefly();
  }
  own.join();
  send_pending();
  wire::Packer done;
  wire::put_status(done, own.failure());
  const std::vector<wire::ChainEnding> endings = own.endings();
  done.put(static_cast<std::uint64_t>(endings.size()));
  for (const wire::ChainEnding& e : endings) wire::put_ending(done, e);
  world.send(0, mpi::kTagDone, done.bytes());
  while (!have_final) {
    if (!take_from_root()) sleep_briefly();
  }
  if (final_status.ok()) return final_status;
  if (!own.failure().ok()) return Status(own.failure().code(), world.who(world.rank()) + ": " + own.failure().message());
  // Rank 0 prints why; the workers end with the same exit code.
  return Status(final_status.code(), world.who(world.rank()) + ": stopped with the run (rank 0 says why)");
}

Status train_in_world(const TrainRequest& request, const mpi::World& world) {
  const bool root = world.rank() == 0;
  std::unique_ptr<RunWriter> writer;
  Prepared p;
  std::vector<ChainState> states;
  std::string data_path, digest;
  Status mine;
  if (root) mine = open_on_root(request, writer, p, states, data_path, digest);
  CREDENCE_RETURN_IF_ERROR(world.agree(mine));

  wire::Packer data_id;
  data_id.put_string(data_path);
  data_id.put_string(digest);
  world.broadcast(data_id.bytes(), 0);
  wire::Unpacker in(data_id.bytes().data(), data_id.bytes().size());
  in.get_string(data_path);
  in.get_string(digest);
  CREDENCE_RETURN_IF_ERROR(world.agree(check_same_data(world, request, data_path, digest)));

  if (root && request.resume_path.empty()) {
    mine = [&]() -> Status {
      Result<Prepared> prepared = prepare_new(request);
      if (!prepared.ok()) return prepared.status();
      p = std::move(*prepared);
      p.header.mpi_ranks = world.size();
      p.header.mpi_hosts = world.hosts();
      Result<std::unique_ptr<RunWriter>> created =
          RunWriter::create(request.out_path, p.header, request.force);
      if (!created.ok()) return created.status();
      writer = std::move(*created);
      log().info("training {} chains of {} over {} ranks on {} hosts ({} parameters, {} "
                 "training rows) into {}",
                 p.settings.chains.chains, method_name(p.settings.sampler.method), world.size(),
                 world.hosts(), p.layout.num_params, p.rows.x.cols(), request.out_path);
      return Status::ok_status();
    }();
  }
  CREDENCE_RETURN_IF_ERROR(world.agree(mine));

  wire::Packer job;
  if (root) put_job(job, p, states);
  world.broadcast(job.bytes(), 0);
  if (!root) {
    wire::Unpacker job_in(job.bytes().data(), job.bytes().size());
    mine = get_job(job_in, p, states);
  }
  CREDENCE_RETURN_IF_ERROR(world.agree(mine));

  if (!root) return run_worker(world, p, states, request.hooks);
  std::vector<ChainCheckpoint> resume;
  for (const ChainState& state : states) resume.push_back(checkpoint_of(state));
  const std::string& run_path = request.resume_path.empty() ? request.out_path : request.resume_path;
  return run_root(world, p, *writer, run_path, std::move(resume), request.hooks);
}

Status run_train_under_mpi(const TrainRequest& request) {
  Result<std::unique_ptr<mpi::World>> world = mpi::World::init();
  if (!world.ok()) return world.status();
  Status status = train_in_world(request, **world);
  // Nobody finalizes while rank 0 may still be writing.
  (*world)->barrier();
  return status;
}
#endif

}  // namespace

Status run_train(const TrainRequest& request) {
#ifdef CREDENCE_HAVE_BLAS
  // Chains run in parallel with OpenMP; BLAS threads inside each chain would fight
  // them for the cores (DESIGN.md section 6).
  openblas_set_num_threads(1);
#endif
#ifdef CREDENCE_HAVE_MPI
  if (mpi::launched_by_mpirun()) return run_train_under_mpi(request);
#endif
  std::unique_ptr<RunWriter> writer;
  std::vector<ChainCheckpoint> resume;
  Prepared prepared;
  if (!request.resume_path.empty()) {
    // Resuming a finished run does nothing and succeeds, so a script or scheduler that
    // resumes after every interruption needs no special case for a kill that landed
    // after the last commit. (Under MPI, where only rank 0 may see the file, it is still
    // refused by RunWriter::reopen.)
    if (Result<std::unique_ptr<RunReader>> done = RunReader::open(request.resume_path);
        done.ok() && (*done)->summary().status == RunStatus::kComplete) {
      log().info("{} is already complete ({} samples kept); nothing to resume",
                 request.resume_path, (*done)->summary().samples);
      return Status::ok_status();
    }
    std::vector<ChainState> states;
    Result<std::unique_ptr<RunWriter>> reopened = RunWriter::reopen(request.resume_path, states);
    if (!reopened.ok()) return reopened.status();
    writer = std::move(*reopened);
    Result<Prepared> p = prepare_resume(writer->header(), request.data_path);
    if (!p.ok()) return p.status();
    prepared = std::move(*p);
    for (const ChainState& state : states) resume.push_back(checkpoint_of(state));
    log().info("resuming {} chains from {}", states.size(), request.resume_path);
  } else {
    Result<Prepared> p = prepare_new(request);
    if (!p.ok()) return p.status();
    prepared = std::move(*p);
    Result<std::unique_ptr<RunWriter>> created =
        RunWriter::create(request.out_path, prepared.header, request.force);
    if (!created.ok()) return created.status();
    writer = std::move(*created);
    log().info("training {} chains of {} ({} parameters, {} training rows) into {}",
               prepared.settings.chains.chains, method_name(prepared.settings.sampler.method),
               prepared.layout.num_params, prepared.rows.x.cols(), request.out_path);
  }
  const std::string& run_path =
      request.resume_path.empty() ? request.out_path : request.resume_path;
  Status status = run_chains_into(prepared, *writer, run_path, std::move(resume), request.hooks);
  writer.reset();  // closed, so that the verdict can read the file
  if (status.ok() && request.verdict != nullptr) {
    *request.verdict = judge_run_file(run_path, prepared.probe.labels);
  }
  return status;
}

}  // namespace credence
