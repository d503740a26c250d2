// Issue 9: a fuzzed run file made RunReader::open hang inside HDF5 1.10, which loops
// forever on a global heap collection whose free-space object has size 0 while reading a
// variable-length string attribute. The reader now walks every collection first and
// refuses such a file as damaged. The damaged file is made here from a real run by
// zeroing that size field (layout: HDF5 file format specification, global heap).
#include <gtest/gtest.h>

#include <cstdint>
#include <fstream>
#include <string>

#include "credence/ensemble.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

std::uint64_t little_u64(const std::string& b, std::size_t at) {
  std::uint64_t v = 0;
  for (int i = 7; i >= 0; --i) v = (v << 8) | static_cast<unsigned char>(b[at + i]);
  return v;
}

TEST(Issue9RunHeapLoop, ZeroSizedFreeSpaceIsRefusedNotLoopedOn) {
  testing::TempDir dir;
  const std::string data = (dir.path() / "pumps.csv").string();
  const std::string run = (dir.path() / "run.h5").string();
  ASSERT_EQ(testing::run_credence("synth --scenario pump-wear --rows 200 --out '" + data + "'")
                .exit_code,
            0);
  auto train = testing::run_credence("--quiet train '" + data +
                                     "' --target condition --id pump_id --hidden 4 --chains 1 "
                                     "--burn-in 5 --samples 2 --out '" + run + "'");
  ASSERT_EQ(train.exit_code, 0) << train.output;
  ASSERT_TRUE(RunReader::open(run).ok()) << "the intact run must open";

  // Find the first collection and its free-space object (index 0).
  std::string bytes = testing::read_text(run);
  const std::size_t gcol = bytes.find("GCOL\x01\x00\x00\x00", 0, 8);
  ASSERT_NE(gcol, std::string::npos) << "a run file keeps its strings in a global heap";
  const std::uint64_t size = little_u64(bytes, gcol + 8);
  std::size_t at = gcol + 16;
  while (at + 16 <= gcol + size && (bytes[at] != 0 || bytes[at + 1] != 0)) {
    at += 16 + (little_u64(bytes, at + 8) + 7) / 8 * 8;
  }
  ASSERT_LT(at + 16, gcol + size) << "no free-space object found";
  for (int i = 0; i < 8; ++i) bytes[at + 8 + static_cast<std::size_t>(i)] = 0;
  const std::string damaged = (dir.path() / "damaged.h5").string();
  std::ofstream(damaged, std::ios::binary) << bytes;

  // Without the check this call never returns; ctest's timeout then fails the test.
  auto reader = RunReader::open(damaged);
  ASSERT_FALSE(reader.ok());
  EXPECT_EQ(reader.status().code(), StatusCode::kCorrupt);
  EXPECT_NE(reader.status().message().find("the file is damaged"), std::string::npos)
      << reader.status().message();
  EXPECT_NE(reader.status().message().find("byte " + std::to_string(gcol)), std::string::npos)
      << reader.status().message();
}

}  // namespace
}  // namespace credence
