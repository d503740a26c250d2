// BatchIterator: per-epoch seeded shuffles cut into consecutive slices; no allocation per batch.
#include <algorithm>
#include <string>

#include "credence/data.h"
#include "data/shuffle.h"

namespace credence {

BatchIterator::BatchIterator(const Eigen::MatrixXf& x, std::span<const std::int32_t> labels,
                             std::span<const std::int64_t> rows, const BatchOptions& options,
                             std::uint64_t seed)
    : x_(x.data()),
      d_(x.rows()),
      labels_(labels),
      rows_(rows.begin(), rows.end()),
      order_(rows.size()),
      options_(options),
      seed_(seed) {
  assert(!rows_.empty());
  assert(options_.batch_rows >= 1);
  assert(static_cast<Eigen::Index>(labels.size()) == x.cols());
  assert(!options_.drop_last || static_cast<std::int64_t>(rows_.size()) >= options_.batch_rows);
  assert(std::all_of(rows_.begin(), rows_.end(),
                     [&](std::int64_t r) { return r >= 0 && r < x.cols(); }));
  build_order(0);
}

// Each epoch restarts from the subset's original order, so its shuffle depends on
// (seed, epoch) only and a saved position can be rebuilt without replaying epochs.
void BatchIterator::build_order(std::int64_t epoch) {
  std::copy(rows_.begin(), rows_.end(), order_.begin());  // same size: no allocation
  std::uint64_t state = data::epoch_shuffle_state(seed_, static_cast<std::uint64_t>(epoch));
  data::shuffle_in_place(std::span<std::int64_t>(order_), state);
}

Status BatchIterator::seek(const BatchPosition& position) {
  const auto n = static_cast<std::int64_t>(rows_.size());
  if (position.epoch < 0 || position.cursor < 0 || position.cursor > n) {
    return Status::corrupt("batch position (epoch " + std::to_string(position.epoch) +
                           ", cursor " + std::to_string(position.cursor) +
                           ") is outside a table of " + std::to_string(n) +
                           " rows; the saved state is damaged or belongs to other data");
  }
  build_order(position.epoch);
  epoch_ = position.epoch;
  cursor_ = position.cursor;
  return Status::ok_status();
}

std::int64_t BatchIterator::batches_per_epoch() const {
  const auto n = static_cast<std::int64_t>(rows_.size());
  const std::int64_t b = options_.batch_rows;
  return options_.drop_last ? n / b : (n + b - 1) / b;
}

BatchInfo BatchIterator::next(Eigen::Ref<Eigen::MatrixXf> x_batch,
                              std::span<std::int32_t> labels_batch) {
  const std::int64_t b = options_.batch_rows;
  assert(x_batch.rows() == d_ && x_batch.cols() >= b);
  assert(static_cast<std::int64_t>(labels_batch.size()) >= b);
  const auto n = static_cast<std::int64_t>(order_.size());
  if (cursor_ >= n || (options_.drop_last && n - cursor_ < b)) {  // start the next epoch
    ++epoch_;
    cursor_ = 0;
    build_order(epoch_);
  }
  const std::int64_t rows = std::min(b, n - cursor_);
  for (std::int64_t i = 0; i < rows; ++i) {
    const std::int64_t r = order_[static_cast<std::size_t>(cursor_ + i)];
    // One data row is one contiguous column of length D.
    std::copy_n(x_ + r * d_, d_, x_batch.col(static_cast<Eigen::Index>(i)).data());
    labels_batch[static_cast<std::size_t>(i)] = labels_[static_cast<std::size_t>(r)];
  }
  cursor_ += rows;
  BatchInfo info;
  info.rows = rows;
  info.epoch = epoch_;
  info.last_of_epoch = cursor_ >= n || (options_.drop_last && n - cursor_ < b);
  return info;
}

}  // namespace credence
