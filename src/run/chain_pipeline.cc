// run_chains_into and how a run ends (chain_pipeline.h).
#include "run/chain_pipeline.h"

#include <fmt/format.h>

#include <numeric>

#include "credence/summaries.h"
#include "run/chain_setup.h"
#include "run/progress_report.h"
#include "run/resume.h"
#include "run/writer_thread.h"

namespace credence {

RunEnd end_of_run(const ChainEndCounts& ends, const TrainSettings& s, const std::string& run_path,
                  const std::string& continue_with) {
  if (ends.stopped > 0) {
    return {RunStatus::kInterrupted,
            Status::interrupted(fmt::format(
                "interrupted; every kept sample is in {}. Continue with: {}", run_path,
                continue_with))};
  }
  if (ends.failed > 0) return {RunStatus::kFailed, ends.failure};
  if (ends.diverged == ends.chains) {
    return {RunStatus::kDiverged,
            Status::diverged(fmt::format(
                "every chain diverged; try a step size ten times smaller (--lr {:g})",
                s.sampler.learning_rate / 10))};
  }
  return {};
}

TrainProgress progress_start(std::string label, const TrainSettings& s,
                             const std::vector<std::int64_t>& next_steps, std::int64_t kept) {
  TrainProgress start;
  start.label = std::move(label);
  start.total_steps =
      (s.chains.burn_in + s.chains.thin * s.chains.samples) * s.chains.chains;
  start.total_samples = s.chains.samples * s.chains.chains;
  start.steps_done = std::accumulate(next_steps.begin(), next_steps.end(), std::int64_t{0});
  start.kept = kept;
  return start;
}

Status run_chains_into(PreparedRun& p, RunWriter& writer, const std::string& run_path,
                       std::vector<ChainCheckpoint> resume, const TrainHooks& train_hooks) {
  const TrainSettings& s = p.settings;
  std::int64_t kept = 0;
  std::vector<std::int64_t> next_steps = next_steps_of(resume, s.chains.chains, kept);
  Result<SampleSummarizer> summarizer =
      SampleSummarizer::create(p.layout, p.probe, s.projections, s.summary_seed);
  if (!summarizer.ok()) return summarizer.status();
  ProgressReport progress(train_hooks,
                          progress_start(fmt::format("train {}", method_name(s.sampler.method)),
                                         s, next_steps, kept));
  WriterThread writer_thread(writer, *summarizer, progress,
                             {.flush_seconds = s.flush_seconds,
                              .train_rows = p.rows.x.cols(),
                              .next_steps = std::move(next_steps),
                              .kept = kept});
  const ChainHooks hooks =
      hooks_into([&](ChainMessage m) { writer_thread.push(std::move(m)); });

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

  ChainEndCounts ends{.chains = static_cast<int>(outcome->chains.size()),
                      .failure = outcome->status};
  for (const ChainOutcome& chain : outcome->chains) {
    ends.diverged += chain.end == ChainEnd::kDiverged;
    ends.stopped += chain.end == ChainEnd::kStopped;
    ends.failed += chain.end == ChainEnd::kFailed;  // run_chains() has logged each one already
  }
  const RunEnd end = end_of_run(ends, s, run_path, "credence train --resume " + run_path);
  CREDENCE_RETURN_IF_ERROR(writer.finish(end.status));
  return end.result;
}

}  // namespace credence
