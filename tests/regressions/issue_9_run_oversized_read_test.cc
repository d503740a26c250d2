// Issue 9: two files fuzz_run made from tests/fuzz/corpus/run/other.h5 (an h5py file with
// a version-0 superblock and version-1 object headers, which no checksum covers).
// - run-oom-28f95b39: the root group's continuation message claims 1.5 GiB at byte
//   16777215 of a 9663-byte file. The plain open fails; the SWMR-read retry let HDF5's
//   POSIX driver zero-fill the claimed chunk past the end of the file, again on each
//   retry: `credence inspect` took 15.7 GB and 85 s before refusing it. The retry now
//   reads through the bounded read driver.
// - run-crash-ccf499a6: a length of 0xc000000000000 bytes, which HDF5 asks malloc for
//   before reading; malloc returns null and HDF5 fails the open (AddressSanitizer must be
//   told to return null too: allocator_may_return_null, set by scripts/test and by
//   tests/fuzz/sanitizer_options.cc).
#include <gtest/gtest.h>
#include <sys/resource.h>

#include <filesystem>
#include <string>

#include "credence/ensemble.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

std::string input(const char* name) {
  return std::string(CREDENCE_SOURCE_DIR) + "/tests/regressions/inputs/" + name;
}

#if !defined(__SANITIZE_ADDRESS__)
long peak_resident_kib() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return usage.ru_maxrss;
}
#endif

TEST(Issue9RunOversizedRead, RefusedWithoutTouchingTheClaimedSize) {
  for (const char* name : {"run-oom-28f95b39", "run-crash-ccf499a6"}) {
    auto reader = RunReader::open(input(name));
    ASSERT_FALSE(reader.ok()) << name;
    EXPECT_EQ(reader.status().code(), StatusCode::kCorrupt) << reader.status().to_string();
  }
#if !defined(__SANITIZE_ADDRESS__)
  // 256 MiB: this test process needs about 20; the bug took 15.7 GB (AddressSanitizer's
  // own bookkeeping makes the figure meaningless there, so the check is skipped).
  EXPECT_LT(peak_resident_kib(), 256L * 1024) << "peak resident set, KiB";
#endif
}

TEST(Issue9RunOversizedRead, EveryCommandThatReadsRunsRefusesItWithAdviceAndNoOutput) {
  testing::TempDir dir;
  const std::string file = input("run-oom-28f95b39");
  const std::string rows = dir.write("rows.csv", "unit_id,temp\n1,2.5\n");
  const std::string out = (dir.path() / "out").string();
  for (const std::string& args : {"inspect '" + file + "'", "diagnose '" + file + "'",
                                  "predict '" + file + "' '" + rows + "' --out '" + out + "'",
                                  "report '" + file + "' '" + rows + "' --out '" + out + "'",
                                  "merge '" + file + "' '" + file + "' --out '" + out + "'"}) {
    auto result = testing::run_credence(args);
    EXPECT_EQ(result.exit_code, 2) << args << "\n" << result.output;
    EXPECT_NE(result.output.find("use an intact copy or train the run again"), std::string::npos)
        << args << "\n"
        << result.output;
    EXPECT_FALSE(std::filesystem::exists(out)) << args;
  }
}

}  // namespace
}  // namespace credence
