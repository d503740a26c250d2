// Helper for recovery_test: writes a run in a loop of append + commit until killed.
//
// usage: ensemble_crash_writer RUN.h5 create|resume|finish
// Prints "ready" once the writer is in SWMR mode; "finish" appends one round and
// finishes the run as complete.
#include <cstdio>
#include <cstring>
#include <string>
#include <vector>

#include "ensemble/test_runs.h"

using namespace credence;

// The test only sees the exit code; the reason goes to stderr, which it shows.
int fail(const Status& status) {
  std::fprintf(stderr, "crash writer: %s\n", status.to_string().c_str());
  return 1;
}

int main(int argc, char** argv) {
  if (argc != 3) {
    std::fprintf(stderr, "usage: ensemble_crash_writer RUN.h5 create|resume|finish\n");
    return 2;
  }
  const std::string path = argv[1];
  const std::string mode = argv[2];
  constexpr int kChains = 3;
  std::vector<std::int64_t> kept(kChains, 0);
  std::unique_ptr<RunWriter> writer;
  if (mode == "create") {
    Result<std::unique_ptr<RunWriter>> created =
        RunWriter::create(path, credence::testing::make_header(kChains, 2001), true);
    if (!created.ok()) {
      std::fprintf(stderr, "%s\n", created.status().to_string().c_str());
      return 1;
    }
    writer = std::move(*created);
  } else {
    std::vector<ChainState> states;
    Result<std::unique_ptr<RunWriter>> reopened = RunWriter::reopen(path, states);
    if (!reopened.ok()) {
      std::fprintf(stderr, "%s\n", reopened.status().to_string().c_str());
      return 1;
    }
    writer = std::move(*reopened);
    for (const ChainState& state : states) kept[static_cast<std::size_t>(state.chain)] = state.kept;
  }
  std::printf("ready\n");
  std::fflush(stdout);
  const RunHeader& header = writer->header();
  for (int round = 0; round < 1000000; ++round) {
    for (int c = 0; c < kChains; ++c) {
      // Chains advance unevenly so per-chain counts differ.
      if (c == 2 && round % 3 == 1) continue;
      const auto k = kept[static_cast<std::size_t>(c)];
      Status appended = credence::testing::append_rows(*writer, c, k);
      if (appended.ok()) {
        appended = writer->set_chain_state(credence::testing::state_after(header, c, k));
      }
      if (!appended.ok()) return fail(appended);
      ++kept[static_cast<std::size_t>(c)];
    }
    if (mode == "finish") {
      const Status finished = writer->finish(RunStatus::kComplete);
      return finished.ok() ? 0 : fail(finished);
    }
    if (round % 2 == 1) {
      const Status committed = writer->commit();
      if (!committed.ok()) return fail(committed);
    }
  }
  return 0;
}
