// run_train: prepare data and network, run the chains, and feed the run file from one
// writer thread.
//
// Threads: OpenMP runs the chains; their hooks (serialised by run_chains) only copy
// into a queue. One writer thread drains the queue every flush interval, computes the
// tracked summaries, appends rows, commits the run file, asks the chains for fresh
// checkpoints and redraws the progress line. Nothing else touches HDF5.
#include "cli/train_job.h"

#include <fmt/chrono.h>
#include <fmt/format.h>

#include <chrono>
#include <condition_variable>
#include <ctime>
#include <mutex>
#include <numeric>
#include <thread>
#include <variant>

#include "cli/interrupt.h"
#include "cli/progress.h"
#include "credence/ensemble.h"
#include "credence/summaries.h"
#include "credence/table_potential.h"
#include "credence/version.h"
#include "util/log.h"

#ifdef CREDENCE_HAVE_BLAS
extern "C" void openblas_set_num_threads(int);
#endif

namespace credence::cli {
namespace {

// Everything a run needs, whether freshly started or resumed.
struct Prepared {
  RunHeader header;
  NetSpec spec;
  ParamLayout layout;
  TrainingRows rows;
  ProbeSet probe;
  TrainSettings settings;
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
  Result<Dataset> data = load_dataset(request.data_path, request.data);
  if (!data.ok()) return data.status();
  Result<std::string> digest = file_sha256_hex(request.data_path);
  if (!digest.ok()) return digest.status();

  PriorSpec prior;
  prior.weight_scale = request.prior_scale;
  Result<NetSpec> spec = request.net_path.empty()
                             ? net_spec_from_options(request.hidden, request.activation, prior)
                             : read_net_file(request.net_path);
  if (!spec.ok()) return spec.status();
  p.spec = *spec;
  const auto classes = static_cast<Index>(data->preprocessing.class_names.size());
  Result<ParamLayout> layout = resolve_layout(p.spec, data->x.rows(), classes);
  if (!layout.ok()) return layout.status();
  p.layout = *layout;

  p.rows = gather_training_rows(data->x, data->labels, data->split.train);
  shape_optimizer_chains(p.settings, p.rows.x.cols());
  if (p.settings.init_seed == 0) p.settings.init_seed = p.settings.chains.seed + 1;

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
  p.probe = gather_probe(*x, *labels, header.probe_rows);
  return p;
}

struct SampleMessage {
  int chain;
  std::int64_t step;
  std::int64_t index;
  Eigen::VectorXf theta;
};
using Message = std::variant<TraceRecord, SampleMessage, ChainState>;

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
  WriterThread(RunWriter& writer, SampleSummarizer& summarizer, ProgressDisplay& progress,
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
      return writer_.append_sample(record);
    }
    return writer_.set_chain_state(std::move(std::get<ChainState>(message)));
  }

  RunWriter& writer_;
  SampleSummarizer& summarizer_;
  SampleSummary summary_;
  ProgressDisplay& progress_;
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

Status run_chains_into(Prepared& p, RunWriter& writer, const std::string& run_path,
                       std::vector<ChainCheckpoint> resume, bool quiet) {
  const TrainSettings& s = p.settings;
  const std::int64_t steps_per_chain = s.chains.burn_in + s.chains.thin * s.chains.samples;
  std::vector<std::int64_t> next_steps(static_cast<std::size_t>(s.chains.chains), 0);
  std::int64_t kept = 0;
  for (std::size_t c = 0; c < resume.size() && c < next_steps.size(); ++c) {
    next_steps[c] = resume[c].next_step;
    kept += resume[c].kept;
  }
  Result<SampleSummarizer> summarizer =
      SampleSummarizer::create(p.layout, p.probe, s.projections, s.chains.seed);
  if (!summarizer.ok()) return summarizer.status();
  ProgressDisplay progress(fmt::format("train {}", method_name(s.sampler.method)),
                           steps_per_chain * s.chains.chains, s.chains.samples * s.chains.chains,
                           quiet);
  WriterThread writer_thread(writer, *summarizer, progress, s.flush_seconds, p.rows.x.cols(),
                             next_steps, kept);

  const PotentialSettings potential_settings = potential_settings_of(s);
  auto factory = [&](int chain) -> std::unique_ptr<PotentialFn> {
    // The batch order of chain c depends on (seed, c) only, not on thread timing.
    auto potential = TablePotential::create(p.rows, p.layout, p.spec.prior, potential_settings,
                                            s.batches, s.chains.seed * 1000003ULL +
                                                           static_cast<std::uint64_t>(chain));
    return potential.ok() ? std::move(*potential) : nullptr;
  };
  auto init = [&](int chain, ThetaRef theta) {
    Eigen::VectorXf start(theta.size());
    initialize_params<float>(start, p.layout,
                             s.init_seed + static_cast<std::uint64_t>(chain) * 7919ULL);
    theta = start;
    return Status::ok_status();
  };
  ChainHooks hooks;
  hooks.on_trace = [&](const TraceRow& row) {
    writer_thread.push(TraceRecord{
        .chain = row.chain,
        .step = row.step,
        .potential = row.report.potential,
        .accuracy = row.report.accuracy.value_or(std::nan("")),
        .step_size = row.report.step_size,
        .speed_ratio = row.report.speed_ratio.value_or(std::nan("")),
        .acceptance = row.report.acceptance.value_or(std::nan(""))});
  };
  hooks.on_sample = [&](const KeptSample& sample) {
    writer_thread.push(SampleMessage{sample.chain, sample.step, sample.index, sample.theta});
  };
  hooks.on_checkpoint = [&](const ChainCheckpoint& c) { writer_thread.push(state_of(c)); };

  const std::atomic<bool>& stop = install_interrupt_handlers();
  RunControl control{.stop = &stop, .checkpoint_request = &writer_thread.checkpoint_request()};
  Result<RunOutcome> outcome = run_chains(s.sampler, s.chains, p.layout.num_params, factory,
                                          init, hooks, control, resume);
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
    failed += chain.end == ChainEnd::kFailed;
    if (chain.end == ChainEnd::kDiverged) {
      log().warn("chain {} diverged at step {}: {}", chain.checkpoint.chain, chain.step, chain.reason);
    }
  }
  const int chains = static_cast<int>(outcome->chains.size());
  RunStatus final_status = RunStatus::kComplete;
  Status result = Status::ok_status();
  if (stopped > 0) {
    final_status = RunStatus::kInterrupted;
    result = Status::interrupted(fmt::format(
        "interrupted; every kept sample is in {0}. Continue with: credence train --resume {0}",
        run_path));
  } else if (failed > 0) {
    final_status = RunStatus::kFailed;
    result = outcome->status;
  } else if (diverged == chains) {
    final_status = RunStatus::kDiverged;
    result = Status::diverged(fmt::format(
        "every chain diverged; try a step size ten times smaller (--lr {:g})",
        s.sampler.learning_rate / 10));
  }
  CREDENCE_RETURN_IF_ERROR(writer.finish(final_status));
  return result;
}

}  // namespace

Status run_train(const TrainRequest& request) {
#ifdef CREDENCE_HAVE_BLAS
  // Chains run in parallel with OpenMP; BLAS threads inside each chain would fight
  // them for the cores (DESIGN.md section 6).
  openblas_set_num_threads(1);
#endif
  std::unique_ptr<RunWriter> writer;
  std::vector<ChainCheckpoint> resume;
  Prepared prepared;
  if (!request.resume_path.empty()) {
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
  return run_chains_into(prepared, *writer, run_path, std::move(resume), request.quiet);
}

}  // namespace credence::cli
