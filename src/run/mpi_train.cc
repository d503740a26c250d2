// run_train_under_mpi: chains spread over ranks, rank 0 the only writer.
//
// Rank r runs global chains r, r + R, r + 2R, ... with its own OpenMP threads, on a
// chain thread; the process's main thread alone talks MPI (MPI_THREAD_FUNNELED).
// Workers send their chains' messages to rank 0, whose main thread feeds them to the
// same WriterThread a local run uses, so rows and states commit exactly as locally.
// Rank 0 forwards the writer's checkpoint requests and any stop to every worker.
#include "run/mpi_train.h"

#include <fmt/format.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <mutex>
#include <thread>

#include "credence/run_verdict.h"
#include "credence/summaries.h"
#include "run/chain_pipeline.h"
#include "run/chain_setup.h"
#include "run/mpi_chains.h"
#include "run/mpi_job.h"
#include "run/mpi_wire.h"
#include "run/mpi_world.h"
#include "run/progress_report.h"
#include "run/resume.h"
#include "run/writer_thread.h"
#include "util/log.h"

namespace credence {
namespace {

bool stop_requested(const TrainHooks& hooks) {
  return hooks.stop != nullptr && hooks.stop->load(std::memory_order_relaxed);
}

void sleep_briefly() { std::this_thread::sleep_for(std::chrono::milliseconds(2)); }

void send_control(const mpi::World& world, bool stop, std::uint64_t generation) {
  wire::Packer out;
  out.put(static_cast<std::uint8_t>(stop));
  out.put(generation);
  for (int r = 1; r < world.size(); ++r) world.send(r, mpi::kTagControl, out.bytes());
}

// Rank 0: its own chains, the writer, and everything the workers send.
Status run_root(const mpi::World& world, PreparedRun& p, RunWriter& writer,
                const std::string& run_path, std::vector<ChainCheckpoint> resume_all,
                const TrainHooks& hooks) {
  const TrainSettings& s = p.settings;
  const int chains = s.chains.chains;
  std::int64_t kept = 0;
  std::vector<std::int64_t> next_steps = next_steps_of(resume_all, chains, kept);
  Result<SampleSummarizer> summarizer =
      SampleSummarizer::create(p.layout, p.probe, s.projections, s.summary_seed);
  if (!summarizer.ok()) return summarizer.status();
  ProgressReport progress(
      hooks, progress_start(fmt::format("train {} ({} ranks)", method_name(s.sampler.method),
                                        world.size()),
                            s, next_steps, kept));
  WriterThread writer_thread(writer, *summarizer, progress,
                             {.flush_seconds = s.flush_seconds,
                              .train_rows = p.rows.x.cols(),
                              .next_steps = std::move(next_steps),
                              .kept = kept});
  const std::vector<int> ids = chains_of_rank(chains, 0, world.size());
  std::vector<ChainCheckpoint> resume;
  for (int id : ids) {
    if (!resume_all.empty()) resume.push_back(std::move(resume_all[static_cast<std::size_t>(id)]));
  }
  std::atomic<bool> stop{false};
  ChainThread own(p, ids,  std::move(resume),
                  hooks_into([&](ChainMessage m) { writer_thread.push(std::move(m)); }),
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
          ChainMessage m;
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

  RunEnd end;
  const std::string resume_line = fmt::format("mpirun -n {} credence train --resume {}",
                                              world.size(), run_path);
  if (!written.ok()) {
    end = {RunStatus::kFailed, written.with_context("writing the run file")};
  } else if (!rank_failure.ok()) {
    // A rank failed as a whole: keep what arrived, resumable.
    end = {RunStatus::kInterrupted,
               Status(rank_failure.code() == StatusCode::kInterrupted ? StatusCode::kInternal
                                                                      : rank_failure.code(),
                      fmt::format("{}; every kept sample that arrived is in {}. Continue with: {}",
                                  rank_failure.message(), run_path, resume_line))};
  } else {
    ChainEndCounts ends;
    ends.chains = chains;
    for (std::size_t i = 0; i < endings.size(); ++i) {
      const wire::ChainEnding& e = endings[i];
      ends.diverged += e.end == ChainEnd::kDiverged;
      ends.stopped += e.end == ChainEnd::kStopped;
      ends.failed += e.end == ChainEnd::kFailed;
      if (e.end == ChainEnd::kDiverged) {
        log().warn("chain {} diverged at step {}: {}", e.chain, e.step, e.reason);
      }
      if (e.end == ChainEnd::kFailed && ends.failure.ok()) {
        ends.failure = Status(e.status.code(), fmt::format("{}: chain {}: {}", world.who(ending_rank[i]),
                                                           e.chain, e.status.message()));
      }
    }
    end = end_of_run(ends, s, run_path, resume_line);
    if (ends.stopped > 0) {
      end.result = Status::interrupted(fmt::format(
          "interrupted ({} stopped first); every kept sample is in {}. Continue with: {}",
          world.who(std::max(stopped_first, 0)), run_path, resume_line));
    }
  }
  Status finished = writer.finish(end.status);
  if (end.result.ok() && !finished.ok()) end.result = finished;
  wire::Packer out;
  wire::put_status(out, end.result);
  for (int r = 1; r < world.size(); ++r) world.send(r, mpi::kTagFinal, out.bytes());
  return end.result;
}

// A worker rank: run its chains, send everything to rank 0, obey its control messages.
Status run_worker(const mpi::World& world, const PreparedRun& p,
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
                  hooks_into([&](ChainMessage m) { outbox.push(std::move(m)); }),
                  RunControl{.stop = &stop, .checkpoint_request = &request});
  std::vector<ChainMessage> pending;
  std::vector<char> bytes;
  auto send_pending = [&] {
    outbox.take(pending);
    if (pending.empty()) return false;
    wire::Packer out;
    out.put(static_cast<std::uint64_t>(pending.size()));
    for (const ChainMessage& m : pending) wire::put_message(out, m);
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
  RootOpening opened;
  std::unique_ptr<RunWriter>& writer = opened.writer;
  PreparedRun& p = opened.prepared;
  std::vector<ChainState>& states = opened.states;
  std::string& data_path = opened.data_path;
  std::string& digest = opened.digest;
  Status mine;
  if (root) mine = open_on_root(request, opened);
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
      Result<PreparedRun> prepared = prepare_new_run(request);
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
  Status status = run_root(world, p, *writer, run_path, std::move(resume), request.hooks);
  writer.reset();  // closed, so that the verdict can read the file (as run_train does)
  if (status.ok() && request.verdict != nullptr) {
    *request.verdict = judge_run_file(run_path, p.probe.labels);
  }
  return status;
}

}  // namespace

Status run_train_under_mpi(const TrainRequest& request) {
  Result<std::unique_ptr<mpi::World>> world = mpi::World::init();
  if (!world.ok()) return world.status();
  Status status = train_in_world(request, **world);
  // Nobody finalizes while rank 0 may still be writing.
  (*world)->barrier();
  return status;
}

}  // namespace credence
