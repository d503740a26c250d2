// Memory guard: --max-memory parsing, the refusal message and the footprint estimates.
#include "util/memory_guard.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <cstdint>
#include <limits>

namespace credence {
namespace {

constexpr std::uint64_t kKiB = 1024;
constexpr std::uint64_t kMiB = kKiB * 1024;
constexpr std::uint64_t kGiB = kMiB * 1024;

TEST(MemoryGuard, PhysicalMemoryMatchesSysconf) {
  // Reference: POSIX sysconf(_SC_PHYS_PAGES) x sysconf(_SC_PAGESIZE), computed here.
  const auto expected = static_cast<std::uint64_t>(::sysconf(_SC_PHYS_PAGES)) *
                        static_cast<std::uint64_t>(::sysconf(_SC_PAGESIZE));
  EXPECT_EQ(physical_memory_bytes(), expected);
  EXPECT_GT(physical_memory_bytes(), 64 * kMiB);  // any machine that runs the tests
}

TEST(MemoryGuard, ParsesBinaryUnitsAndByteCounts) {
  // Values worked by hand: 1K = 1024 bytes (binary prefixes, IEC 80000-13).
  const std::uint64_t physical = 16 * kGiB;
  EXPECT_EQ(parse_memory_limit("8G", physical)->bytes, 8 * kGiB);
  EXPECT_EQ(parse_memory_limit("500M", physical)->bytes, 500 * kMiB);
  EXPECT_EQ(parse_memory_limit("500m", physical)->bytes, 500 * kMiB);
  EXPECT_EQ(parse_memory_limit("64KiB", physical)->bytes, 64 * kKiB);
  EXPECT_EQ(parse_memory_limit("2GB", physical)->bytes, 2 * kGiB);
  EXPECT_EQ(parse_memory_limit("1.5G", physical)->bytes, 3 * kGiB / 2);
  EXPECT_EQ(parse_memory_limit("1T", physical)->bytes, 1024 * kGiB);
  EXPECT_EQ(parse_memory_limit("1048576", physical)->bytes, kMiB);
  EXPECT_EQ(parse_memory_limit(" 3M ", physical)->bytes, 3 * kMiB);
}

TEST(MemoryGuard, ParsesSharesOfPhysicalMemory) {
  const std::uint64_t physical = 10 * kGiB;
  EXPECT_EQ(parse_memory_limit("80%", physical)->bytes, 8 * kGiB);
  EXPECT_EQ(parse_memory_limit("100%", physical)->bytes, physical);
  EXPECT_EQ(parse_memory_limit("12.5%", physical)->bytes, 10 * kGiB / 8);
  EXPECT_NE(parse_memory_limit("80%", physical)->source.find("80%"), std::string::npos);
}

TEST(MemoryGuard, RefusesMalformedLimitsNamingTheFlag) {
  const std::uint64_t physical = 16 * kGiB;
  for (const char* bad : {"", "G", "abc", "-1G", "8X", "8GG", "0", "0M", "0%", "101%", "nan", "inf",
                          "1e3M", "8 G B", "1.2.3G", "9999999999T"}) {
    Result<MemoryLimit> limit = parse_memory_limit(bad, physical);
    ASSERT_FALSE(limit.ok()) << "'" << bad << "' was accepted";
    EXPECT_EQ(limit.status().code(), StatusCode::kInvalidInput);
    EXPECT_NE(limit.status().message().find("--max-memory"), std::string::npos);
    EXPECT_NE(limit.status().message().find("such as 8G"), std::string::npos);
  }
  // A share needs to know the machine's memory.
  EXPECT_FALSE(parse_memory_limit("50%", 0).ok());
}

TEST(MemoryGuard, DefaultIsEightyPercentOfPhysicalMemory) {
  Result<MemoryLimit> limit = memory_limit_from_flag("");
  ASSERT_TRUE(limit.ok());
  const double share =
      static_cast<double>(limit->bytes) / static_cast<double>(physical_memory_bytes());
  EXPECT_NEAR(share, 0.80, 1e-9);
  EXPECT_NE(limit->source.find("default"), std::string::npos);
}

TEST(MemoryGuard, CheckPassesAtTheLimitAndRefusesAbove) {
  const MemoryLimit limit{100 * kMiB, "--max-memory 100M"};
  EXPECT_TRUE(check_memory("predicting", 100 * kMiB, limit).ok());
  Status refused = check_memory("run.h5: evaluating 5 parameters", 300 * kMiB, limit);
  ASSERT_EQ(refused.code(), StatusCode::kInvalidInput);
  const std::string& m = refused.message();
  EXPECT_NE(m.find("run.h5: evaluating 5 parameters"), std::string::npos) << m;
  EXPECT_NE(m.find("300 MiB"), std::string::npos) << m;            // the estimate
  EXPECT_NE(m.find("100 MiB"), std::string::npos) << m;            // the limit
  EXPECT_NE(m.find("--max-memory 100M"), std::string::npos) << m;  // where it came from
  // What to do: 300 MiB plus a quarter, rounded up to whole MiB = 376M (by hand).
  EXPECT_NE(m.find("--max-memory 376M"), std::string::npos) << m;
  // A zero limit means the machine did not say: nothing is refused.
  EXPECT_TRUE(check_memory("x", std::numeric_limits<std::uint64_t>::max(), MemoryLimit{}).ok());
}

TEST(MemoryGuard, FormatsBytesInBinaryUnits) {
  EXPECT_EQ(format_bytes(512), "512 B");
  EXPECT_EQ(format_bytes(2 * kKiB), "2 KiB");
  EXPECT_EQ(format_bytes(3 * kGiB / 2), "1.5 GiB");
}

TEST(MemoryGuard, SaturatesInsteadOfWrapping) {
  constexpr std::uint64_t kMax = std::numeric_limits<std::uint64_t>::max();
  EXPECT_EQ(saturating_mul(kMax / 2, 3), kMax);
  EXPECT_EQ(saturating_add(kMax - 1, 5), kMax);
  EXPECT_EQ(saturating_mul(0, kMax), 0u);
  EXPECT_EQ(saturating_mul(6, 7), 42u);
}

TEST(MemoryGuard, EnsembleEstimateCountsSamplesAndWorkspaces) {
  // By hand: 2 x 1000 params x 50 samples x 4 B = 400000 B; workspaces 2 threads x
  // (100 rows x 64 wide x 2 layers x 2 arrays x 4 B) = 204800 B; total 604800 B.
  EnsembleMemoryInputs in;
  in.parameters = 1000;
  in.samples = 50;
  in.block_rows = 100;
  in.widest_layer = 64;
  in.layers = 2;
  in.threads = 2;
  EXPECT_EQ(estimate_ensemble_bytes(in), 604800u);
  in.table_file_bytes = 1000;  // + 1000 + (500 + 1) x 8 = 5008 B
  EXPECT_EQ(estimate_ensemble_bytes(in), 604800u + 5008u);
  // An absurd net saturates rather than wrapping into a small number.
  in.parameters = std::uint64_t{1} << 40;
  in.samples = std::uint64_t{1} << 30;
  EXPECT_EQ(estimate_ensemble_bytes(in), std::numeric_limits<std::uint64_t>::max());
}

TEST(MemoryGuard, TrainEstimateGrowsWithEveryInput) {
  TrainMemoryInputs in;
  in.data_file_bytes = 10 * kMiB;
  in.parameters = 100000;
  in.chains = 4;
  in.samples_in_memory = 40;
  in.batch_rows = 128;
  in.widest_layer = 256;
  in.layers = 3;
  Result<std::uint64_t> base = estimate_train_bytes(in);
  ASSERT_TRUE(base.ok());
  // By hand: table 10 MiB + (5 MiB + 1) x 8 = 52428808 B, float copy (5 MiB + 1) x 4 =
  // 20971524 B; per chain 5 x 100000 x 4 + 128 x 256 x 3 x 2 x 4 = 2786432 B, x 4 chains;
  // queued 40 x 100000 x 4 = 16000000 B. Total 100546060 B.
  EXPECT_EQ(*base, 100546060u);
  for (std::uint64_t TrainMemoryInputs::*field :
       {&TrainMemoryInputs::data_file_bytes, &TrainMemoryInputs::parameters,
        &TrainMemoryInputs::chains, &TrainMemoryInputs::samples_in_memory,
        &TrainMemoryInputs::batch_rows, &TrainMemoryInputs::widest_layer}) {
    TrainMemoryInputs more = in;
    more.*field *= 2;
    EXPECT_GT(*estimate_train_bytes(more), *base);
  }
  in.chains = 0;
  EXPECT_EQ(estimate_train_bytes(in).status().code(), StatusCode::kInvalidInput);
}

}  // namespace
}  // namespace credence
