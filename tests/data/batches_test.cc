// Minibatches without replacement: coverage per epoch, reproducibility, short last batch,
// seek to a saved position, and no heap allocation per batch (counted by replacing the
// global operator new).
#include <gtest/gtest.h>

#include <algorithm>
#include <atomic>
#include <cstdlib>
#include <new>

#include "credence/data.h"
#include "testing/seed.h"

namespace {
std::atomic<long> g_allocations{0};
}  // namespace

// Counting every operator new (and malloc, which Eigen uses) in this test executable.
extern "C" {
void* __libc_malloc(std::size_t size);
void __libc_free(void* pointer);
void* malloc(std::size_t size) {
  ++g_allocations;
  return __libc_malloc(size);
}
}
void* operator new(std::size_t size) {
  ++g_allocations;
  if (void* p = __libc_malloc(size == 0 ? 1 : size)) return p;
  throw std::bad_alloc();
}
void operator delete(void* p) noexcept { __libc_free(p); }
void operator delete(void* p, std::size_t) noexcept { __libc_free(p); }

namespace credence {
namespace {

// (D = 3, N = 10): column r holds r, 10 r, 100 r so a batch column tells its row.
Eigen::MatrixXf design(Eigen::Index n) {
  Eigen::MatrixXf x(3, n);
  for (Eigen::Index r = 0; r < n; ++r) {
    x(0, r) = static_cast<float>(r);
    x(1, r) = static_cast<float>(10 * r);
    x(2, r) = static_cast<float>(100 * r);
  }
  return x;
}

TEST(BatchIterator, EveryRowOncePerEpochWithAShortLastBatch) {
  const Eigen::MatrixXf x = design(10);
  std::vector<std::int32_t> labels = {0, 1, 0, 1, 0, 1, 0, 1, 0, 1};
  std::vector<std::int64_t> rows = {0, 1, 2, 3, 4, 5, 6, 7, 8, 9};
  BatchOptions options;
  options.batch_rows = 4;
  BatchIterator batches(x, labels, rows, options, testing::test_seed(3));
  EXPECT_EQ(batches.batches_per_epoch(), 3);
  Eigen::MatrixXf xb(3, 4);
  std::vector<std::int32_t> yb(4);
  for (int epoch = 0; epoch < 3; ++epoch) {
    std::vector<std::int64_t> seen;
    std::vector<std::int64_t> sizes;
    while (true) {
      BatchInfo info = batches.next(xb, yb);
      EXPECT_EQ(info.epoch, epoch);
      sizes.push_back(info.rows);
      for (std::int64_t i = 0; i < info.rows; ++i) {
        const auto r = static_cast<std::int64_t>(xb(0, i));
        EXPECT_EQ(xb(2, i), 100.0f * static_cast<float>(r));  // whole column copied
        EXPECT_EQ(yb[static_cast<std::size_t>(i)], labels[static_cast<std::size_t>(r)]);
        seen.push_back(r);
      }
      if (info.last_of_epoch) break;
    }
    EXPECT_EQ(sizes, (std::vector<std::int64_t>{4, 4, 2}));  // the short batch reports 2
    std::sort(seen.begin(), seen.end());
    EXPECT_EQ(seen, rows);
  }
}

TEST(BatchIterator, DropLastSkipsTheShortBatch) {
  const Eigen::MatrixXf x = design(10);
  std::vector<std::int32_t> labels(10, 0);
  std::vector<std::int64_t> rows = {1, 3, 5, 7, 9, 2, 4};  // a subset: 7 rows
  BatchOptions options;
  options.batch_rows = 3;
  options.drop_last = true;
  BatchIterator batches(x, labels, rows, options, 11);
  EXPECT_EQ(batches.batches_per_epoch(), 2);
  Eigen::MatrixXf xb(3, 3);
  std::vector<std::int32_t> yb(3);
  for (int i = 0; i < 6; ++i) {
    BatchInfo info = batches.next(xb, yb);
    EXPECT_EQ(info.rows, 3);
    EXPECT_EQ(info.epoch, i / 2);
    EXPECT_EQ(info.last_of_epoch, i % 2 == 1);
    for (int c = 0; c < 3; ++c) {
      EXPECT_NE(std::find(rows.begin(), rows.end(), static_cast<std::int64_t>(xb(0, c))), rows.end());
    }
  }
}

TEST(BatchIterator, SameSeedSameOrderOtherSeedOtherOrder) {
  const Eigen::MatrixXf x = design(50);
  std::vector<std::int32_t> labels(50, 1);
  std::vector<std::int64_t> rows(50);
  for (std::size_t i = 0; i < rows.size(); ++i) rows[i] = static_cast<std::int64_t>(i);
  const std::uint64_t seed = testing::test_seed(42);
  auto order = [&](std::uint64_t s) {
    BatchIterator batches(x, labels, rows, {.batch_rows = 8, .drop_last = false}, s);
    Eigen::MatrixXf xb(3, 8);
    std::vector<std::int32_t> yb(8);
    std::vector<float> out;
    for (int i = 0; i < 14; ++i) {  // two epochs of 7 batches
      BatchInfo info = batches.next(xb, yb);
      for (std::int64_t c = 0; c < info.rows; ++c) out.push_back(xb(0, c));
    }
    return out;
  };
  const std::vector<float> a = order(seed);
  EXPECT_EQ(a, order(seed));
  EXPECT_NE(a, order(seed + 1));
  // The second epoch is a fresh shuffle, not a replay of the first.
  EXPECT_FALSE(std::equal(a.begin(), a.begin() + 50, a.begin() + 50));
}

TEST(BatchIterator, SeekToASavedPositionContinuesWithIdenticalBatches) {
  // 23 rows in batches of 5 (short last batch of 3) and, separately, with drop_last:
  // positions saved mid-epoch, at an epoch's end and at the start of a later epoch.
  const Eigen::MatrixXf x = design(40);
  std::vector<std::int32_t> labels(40);
  for (std::size_t i = 0; i < labels.size(); ++i) labels[i] = static_cast<std::int32_t>(i % 3);
  std::vector<std::int64_t> rows;
  for (std::int64_t r = 39; r >= 0; r -= 2) rows.push_back(r);  // a subset, not sorted
  for (std::int64_t r = 0; r < 6; r += 2) rows.push_back(r);
  ASSERT_EQ(rows.size(), 23u);
  const std::uint64_t seed = testing::test_seed(77);
  for (bool drop_last : {false, true}) {
    const BatchOptions options{.batch_rows = 5, .drop_last = drop_last};
    BatchIterator whole(x, labels, rows, options, seed);
    Eigen::MatrixXf xb(3, 5);
    std::vector<std::int32_t> yb(5);
    std::vector<BatchPosition> positions;
    std::vector<std::vector<float>> batches;
    for (int i = 0; i < 30; ++i) {
      positions.push_back(whole.position());
      BatchInfo info = whole.next(xb, yb);
      batches.emplace_back(xb.data(), xb.data() + 3 * info.rows);
    }
    // The position before batch 0 is (0, 0); after an epoch's last batch it is (e, n or
    // the dropped remainder's start), and next() moves on to epoch e + 1.
    EXPECT_EQ(positions[0], (BatchPosition{0, 0}));
    EXPECT_EQ(positions[5], (BatchPosition{drop_last ? 1 : 0, drop_last ? 5 : 23}));
    for (std::size_t k : {std::size_t{3}, std::size_t{5}, std::size_t{12}, std::size_t{29}}) {
      BatchIterator resumed(x, labels, rows, options, seed + 1000);
      BatchIterator same_seed(x, labels, rows, options, seed);
      ASSERT_TRUE(same_seed.seek(positions[k]).ok());
      for (std::size_t i = k; i < batches.size(); ++i) {
        BatchInfo info = same_seed.next(xb, yb);
        std::vector<float> got(xb.data(), xb.data() + 3 * info.rows);
        ASSERT_EQ(got, batches[i]) << "batch " << i << " after a seek to batch " << k
                                   << (drop_last ? " (drop_last)" : "");
      }
      // A position belongs to its seed: another seed gives other batches.
      ASSERT_TRUE(resumed.seek(positions[k]).ok());
      resumed.next(xb, yb);
      std::vector<float> other(xb.data(), xb.data() + 3 * 5);
      EXPECT_NE(other, std::vector<float>(batches[k].begin(), batches[k].begin() + 15));
    }
  }
}

TEST(BatchIterator, EachEpochIsAFreshShuffleOfTheOriginalOrder) {
  // Epoch e's order does not depend on the epochs before it: an iterator seeked
  // straight to (e, 0) hands out the same rows as one that walked there.
  const Eigen::MatrixXf x = design(30);
  std::vector<std::int32_t> labels(30, 0);
  std::vector<std::int64_t> rows(30);
  for (std::size_t i = 0; i < rows.size(); ++i) rows[i] = static_cast<std::int64_t>(i);
  const std::uint64_t seed = testing::test_seed(78);
  BatchIterator walked(x, labels, rows, {.batch_rows = 30, .drop_last = false}, seed);
  Eigen::MatrixXf xb(3, 30);
  std::vector<std::int32_t> yb(30);
  for (std::int64_t epoch = 0; epoch < 5; ++epoch) {
    walked.next(xb, yb);
    const Eigen::MatrixXf expected = xb;
    BatchIterator jumped(x, labels, rows, {.batch_rows = 30, .drop_last = false}, seed);
    ASSERT_TRUE(jumped.seek({epoch, 0}).ok());
    EXPECT_EQ(jumped.next(xb, yb).epoch, epoch);
    EXPECT_EQ(xb, expected) << "epoch " << epoch;
  }
}

TEST(BatchIterator, SeekRejectsAPositionOutsideTheTable) {
  const Eigen::MatrixXf x = design(10);
  std::vector<std::int32_t> labels(10, 0);
  std::vector<std::int64_t> rows = {0, 1, 2, 3, 4, 5, 6};
  BatchIterator batches(x, labels, rows, {.batch_rows = 3, .drop_last = false}, 1);
  Eigen::MatrixXf xb(3, 3);
  std::vector<std::int32_t> yb(3);
  batches.next(xb, yb);
  for (BatchPosition bad : {BatchPosition{0, 8}, BatchPosition{-1, 0}, BatchPosition{2, -3}}) {
    Status status = batches.seek(bad);
    EXPECT_EQ(status.code(), StatusCode::kCorrupt);
    EXPECT_NE(status.message().find("outside a table of 7 rows"), std::string::npos)
        << status.message();
  }
  EXPECT_EQ(batches.position(), (BatchPosition{0, 3}));  // unchanged by the failures
  EXPECT_TRUE(batches.seek({4, 7}).ok());                 // the end of an epoch is valid
  EXPECT_EQ(batches.next(xb, yb).epoch, 5);
}

TEST(BatchIterator, NextAllocatesNothing) {
  const Eigen::MatrixXf x = design(1000);
  std::vector<std::int32_t> labels(1000, 0);
  std::vector<std::int64_t> rows(1000);
  for (std::size_t i = 0; i < rows.size(); ++i) rows[i] = static_cast<std::int64_t>(i);
  const long at_start = g_allocations.load();
  BatchIterator batches(x, labels, rows, {.batch_rows = 64, .drop_last = false}, 5);
  EXPECT_GT(g_allocations.load(), at_start);  // the counter sees the constructor's copy
  Eigen::MatrixXf xb(3, 64);
  std::vector<std::int32_t> yb(64);
  const long before = g_allocations.load();
  std::int64_t total = 0;
  for (int i = 0; i < 100; ++i) total += batches.next(xb, yb).rows;  // crosses 6 epochs
  EXPECT_EQ(g_allocations.load() - before, 0);
  EXPECT_GT(total, 6000);
}

}  // namespace
}  // namespace credence
