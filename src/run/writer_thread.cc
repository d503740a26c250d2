// WriterThread: the queue, the commit rounds and the rows they write (writer_thread.h).
#include "run/writer_thread.h"

#include <algorithm>
#include <numeric>
#include <variant>

namespace credence {
namespace {

int chain_of(const ChainMessage& message) {
  return std::visit([](const auto& m) { return m.chain; }, message);
}

}  // namespace

WriterThread::WriterThread(RunWriter& writer, SampleSummarizer& summarizer,
                           ProgressReport& progress, WriterThreadSettings settings)
    : writer_(writer),
      summarizer_(summarizer),
      summary_(summarizer.make_summary()),
      progress_(progress),
      flush_interval_(std::chrono::duration<double>(std::max(0.05, settings.flush_seconds))),
      rows_(static_cast<double>(settings.train_rows)),
      next_steps_(std::move(settings.next_steps)),
      kept_(settings.kept),
      thread_([this] { loop(); }) {}

void WriterThread::push(ChainMessage message) {
  std::lock_guard<std::mutex> lock(mutex_);
  queue_.push_back(std::move(message));
}

Status WriterThread::stop() {
  {
    std::lock_guard<std::mutex> lock(mutex_);
    stopping_ = true;
  }
  wake_.notify_one();
  if (thread_.joinable()) thread_.join();
  return status_;
}

std::int64_t WriterThread::steps_done() const {
  return std::accumulate(next_steps_.begin(), next_steps_.end(), std::int64_t{0});
}

void WriterThread::loop() {
  std::vector<ChainMessage> batch, later;
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

Status WriterThread::write(ChainMessage& message) {
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

}  // namespace credence
