// A one-line progress display for long work: drawn only when stderr is a terminal,
// otherwise an occasional log line; silent with --quiet.
#pragma once

#include <chrono>
#include <cstdint>
#include <functional>
#include <string>

#include "credence/train.h"

namespace credence::cli {

class ProgressDisplay {
 public:
  /// `total_steps` counts every chain's steps; `total_samples` every kept sample.
  /// `quiet` turns it off; a non-terminal stderr gets a log line every 15 s instead.
  ProgressDisplay(std::string label, std::int64_t total_steps, std::int64_t total_samples,
                  bool quiet);
  ~ProgressDisplay();

  /// Redraws at most five times a second. `loss` is the latest minibatch U~/N.
  void update(std::int64_t steps_done, std::int64_t kept, double loss);
  /// Draws the final state and ends the line.
  void finish(std::int64_t steps_done, std::int64_t kept);

 private:
  void draw(std::int64_t steps_done, std::int64_t kept, double loss, bool final);

  std::string label_;
  std::int64_t total_steps_;
  std::int64_t total_samples_;
  bool quiet_;
  bool terminal_;
  bool drawn_ = false;
  std::chrono::steady_clock::time_point start_;
  std::chrono::steady_clock::time_point last_draw_;
};

/// A TrainHooks::progress that draws a ProgressDisplay, a fresh one for each run it
/// reports (so one hook serves every training of compare and sweep).
std::function<void(const TrainProgress&)> progress_line(bool quiet);

}  // namespace credence::cli
