// One rank's share of an MPI training run's chains: which global chains it runs, the
// thread that runs them, and the outbox their messages wait in for the rank's MPI thread.
#pragma once

#include <atomic>
#include <mutex>
#include <thread>
#include <vector>

#include "credence/samplers.h"
#include "run/chain_message.h"
#include "run/chain_setup.h"
#include "run/mpi_wire.h"
#include "run/prepared_run.h"

namespace credence {

/// Rank r of R runs global chains r, r + R, r + 2R, ...
inline std::vector<int> chains_of_rank(int chains, int rank, int ranks) {
  std::vector<int> ids;
  for (int c = rank; c < chains; c += ranks) ids.push_back(c);
  return ids;
}

// What a rank's own chains produce, waiting for its MPI thread.
class Outbox {
 public:
  void push(ChainMessage message) {
    std::lock_guard<std::mutex> lock(mutex_);
    messages_.push_back(std::move(message));
  }
  void take(std::vector<ChainMessage>& into) {
    std::lock_guard<std::mutex> lock(mutex_);
    into.swap(messages_);
    messages_.clear();
  }

 private:
  std::mutex mutex_;
  std::vector<ChainMessage> messages_;
};

// One rank's share of the chains, run on their own thread.
class ChainThread {
 public:
  ChainThread(const PreparedRun& p, const std::vector<int>& ids, std::vector<ChainCheckpoint> resume,
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
  const PreparedRun& p_;
  ChainSettings chains_;
  ChainHooks hooks_;
  RunControl control_;
  std::vector<ChainCheckpoint> resume_;
  RunOutcome outcome_;
  Status failure_;
  std::atomic<bool> finished_{false};
  std::thread thread_;
};

}  // namespace credence
