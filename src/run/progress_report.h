// What a training run tells TrainHooks::progress (train.h), and how often.
#pragma once

#include <chrono>
#include <cstdint>
#include <functional>

#include "credence/train.h"

namespace credence {

/// Hands TrainHooks::progress where the run stands: once at the start, at most every
/// kInterval while the chains run, and once when they have ended. Calls come from
/// whichever thread calls update() and finish(), never two at once.
class ProgressReport {
 public:
  /// `start`: the label, totals and what a resumed run has already done.
  ProgressReport(const TrainHooks& hooks, TrainProgress start)
      : report_(hooks.progress), now_(std::move(start)) {
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

}  // namespace credence
