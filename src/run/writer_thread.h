// The one thread of a training run that talks to HDF5, and its commit protocol.
//
// The chains' hooks (serialised by run_chains) only copy messages into its queue. It
// drains the queue at least four times a second, computes the tracked summaries of each
// kept sample, appends rows, and every flush interval commits the run file and asks the
// chains for fresh checkpoints. A chain's rows are committed only together with a later
// state of that chain, so after Ctrl-C or kill -9 the run file never holds a row that its
// stored state would produce again on resume (DEVELOPERS.md, "How a training run stays
// consistent").
#pragma once

#include <atomic>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <cstdint>
#include <mutex>
#include <thread>
#include <vector>

#include "credence/ensemble.h"
#include "credence/summaries.h"
#include "run/chain_message.h"
#include "run/progress_report.h"

namespace credence {

struct WriterThreadSettings {
  /// Longest time a kept sample waits before it is committed (at least 0.05 s).
  double flush_seconds = 2.0;
  /// Training rows: the trace's potential divided by them is the loss progress shows.
  std::int64_t train_rows = 1;
  /// Each chain's first step still to run (all 0 for a fresh run); one entry per chain.
  std::vector<std::int64_t> next_steps;
  /// Samples already kept (a resumed run's).
  std::int64_t kept = 0;
};

class WriterThread {
 public:
  /// Starts the thread. `writer`, `summarizer` and `progress` must outlive it.
  WriterThread(RunWriter& writer, SampleSummarizer& summarizer, ProgressReport& progress,
               WriterThreadSettings settings);
  ~WriterThread() { (void)stop(); }
  WriterThread(const WriterThread&) = delete;
  WriterThread& operator=(const WriterThread&) = delete;

  /// Queues a message; messages of one chain must come in step order.
  void push(ChainMessage message);

  /// The generation counter the chains serve checkpoints for (RunControl).
  const std::atomic<std::uint64_t>& checkpoint_request() const { return checkpoint_request_; }

  /// Drains what is queued, commits, and ends the thread. Returns the first error.
  Status stop();

  /// After stop(): steps run and samples kept over every chain.
  std::int64_t steps_done() const;
  std::int64_t kept() const { return kept_; }

 private:
  void loop();
  Status write(ChainMessage& message);

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
  std::vector<ChainMessage> queue_;
  bool stopping_ = false;
  Status status_;
  std::thread thread_;  // last: starts after every member above exists
};

}  // namespace credence
