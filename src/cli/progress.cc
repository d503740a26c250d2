// Progress bar on a terminal, log lines elsewhere.
#include "cli/progress.h"

#include <fmt/format.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <memory>

#include "util/log.h"

namespace credence::cli {
namespace {

std::string format_duration(double seconds) {
  if (!std::isfinite(seconds) || seconds < 0) return "--:--";
  const auto total = static_cast<long long>(seconds + 0.5);
  if (total >= 3600) return fmt::format("{}:{:02}:{:02}", total / 3600, total / 60 % 60, total % 60);
  return fmt::format("{}:{:02}", total / 60, total % 60);
}

}  // namespace

ProgressDisplay::ProgressDisplay(std::string label, std::int64_t total_steps,
                                 std::int64_t total_samples, bool quiet)
    : label_(std::move(label)),
      total_steps_(total_steps),
      total_samples_(total_samples),
      quiet_(quiet),
      terminal_(isatty(STDERR_FILENO) == 1),
      start_(std::chrono::steady_clock::now()),
      last_draw_(start_) {}

ProgressDisplay::~ProgressDisplay() {
  if (drawn_ && terminal_) std::fputc('\n', stderr);
}

void ProgressDisplay::update(std::int64_t steps_done, std::int64_t kept, double loss) {
  if (quiet_) return;
  const auto now = std::chrono::steady_clock::now();
  const double since = std::chrono::duration<double>(now - last_draw_).count();
  if (since < (terminal_ ? 0.2 : 15.0)) return;
  last_draw_ = now;
  draw(steps_done, kept, loss, false);
}

void ProgressDisplay::finish(std::int64_t steps_done, std::int64_t kept) {
  if (quiet_) return;
  draw(steps_done, kept, std::nan(""), true);
  if (terminal_) std::fputc('\n', stderr);
  drawn_ = false;
}

void ProgressDisplay::draw(std::int64_t steps_done, std::int64_t kept, double loss, bool final) {
  const double elapsed =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
  const double fraction =
      total_steps_ > 0 ? std::min(1.0, static_cast<double>(steps_done) / static_cast<double>(total_steps_))
                       : 1.0;
  const double rate = elapsed > 0 ? static_cast<double>(steps_done) / elapsed : 0.0;
  const double eta = rate > 0 ? static_cast<double>(total_steps_ - steps_done) / rate : NAN;
  const std::string loss_text = std::isfinite(loss) ? fmt::format("  U/N {:.4g}", loss) : "";
  const std::string timing = final ? fmt::format("took {}", format_duration(elapsed))
                                   : fmt::format("ETA {}", format_duration(eta));
  const std::string text = fmt::format("{:>3.0f}%  {}/{} steps  {:.0f} steps/s  {}  kept {}/{}{}",
                                       100 * fraction, steps_done, total_steps_, rate, timing, kept,
                                       total_samples_, loss_text);
  if (!terminal_) {
    log().info("{}: {}", label_, text);
    return;
  }
  constexpr int kWidth = 24;
  const int filled = static_cast<int>(fraction * kWidth);
  std::string bar(static_cast<std::size_t>(filled), '#');
  bar.append(static_cast<std::size_t>(kWidth - filled), '.');
  std::fprintf(stderr, "\r\033[K%s [%s] %s", label_.c_str(), bar.c_str(), text.c_str());
  std::fflush(stderr);
  drawn_ = true;
}

std::function<void(const TrainProgress&)> progress_line(bool quiet) {
  auto display = std::make_shared<std::unique_ptr<ProgressDisplay>>();
  return [display, quiet](const TrainProgress& p) {
    if (!*display) {
      *display = std::make_unique<ProgressDisplay>(p.label, p.total_steps, p.total_samples, quiet);
    }
    if (p.finished) {
      (*display)->finish(p.steps_done, p.kept);
      display->reset();
    } else {
      (*display)->update(p.steps_done, p.kept, p.loss);
    }
  };
}

}  // namespace credence::cli
