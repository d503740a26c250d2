// Byte images of what travels between the ranks of an MPI training run: the chains'
// messages (kept samples, trace rows, chain states), chain outcomes, statuses and the
// job every rank runs. Plain bytes in this machine's layout: every rank of one job runs
// the same build on the same kind of CPU.
#pragma once

#include <cstdint>
#include <cstring>
#include <string>
#include <type_traits>
#include <vector>

#include "run/chain_message.h"
#include "credence/ensemble.h"
#include "credence/samplers.h"

namespace credence::wire {

/// Appends values to a byte buffer.
class Packer {
 public:
  template <typename T>
  void put(const T& value) {
    static_assert(std::is_trivially_copyable_v<T>);
    const auto* bytes = reinterpret_cast<const char*>(&value);
    bytes_.insert(bytes_.end(), bytes, bytes + sizeof(T));
  }
  template <typename T>
  void put_vector(const std::vector<T>& values) {
    static_assert(std::is_trivially_copyable_v<T>);
    put(static_cast<std::uint64_t>(values.size()));
    const auto* bytes = reinterpret_cast<const char*>(values.data());
    bytes_.insert(bytes_.end(), bytes, bytes + values.size() * sizeof(T));
  }
  void put_string(const std::string& text) {
    put(static_cast<std::uint64_t>(text.size()));
    bytes_.insert(bytes_.end(), text.begin(), text.end());
  }
  std::vector<char>& bytes() { return bytes_; }

 private:
  std::vector<char> bytes_;
};

/// Reads values back in the order they were put; every read checks the bounds.
class Unpacker {
 public:
  Unpacker(const char* data, std::size_t size) : data_(data), size_(size) {}
  template <typename T>
  bool get(T& value) {
    static_assert(std::is_trivially_copyable_v<T>);
    if (size_ - at_ < sizeof(T)) return fail();
    std::memcpy(&value, data_ + at_, sizeof(T));
    at_ += sizeof(T);
    return true;
  }
  template <typename T>
  bool get_vector(std::vector<T>& values) {
    std::uint64_t n = 0;
    if (!get(n) || (size_ - at_) / sizeof(T) < n) return fail();
    values.resize(static_cast<std::size_t>(n));
    std::memcpy(values.data(), data_ + at_, values.size() * sizeof(T));
    at_ += values.size() * sizeof(T);
    return true;
  }
  bool get_string(std::string& text) {
    std::uint64_t n = 0;
    if (!get(n) || size_ - at_ < n) return fail();
    text.assign(data_ + at_, static_cast<std::size_t>(n));
    at_ += static_cast<std::size_t>(n);
    return true;
  }
  bool done() const { return ok_ && at_ == size_; }
  bool ok() const { return ok_; }

 private:
  bool fail() {
    ok_ = false;
    return false;
  }
  const char* data_;
  std::size_t size_;
  std::size_t at_ = 0;
  bool ok_ = true;
};

void put_status(Packer& out, const Status& status);
bool get_status(Unpacker& in, Status& status);

/// The chains' messages to the writer, many to one buffer.
void put_message(Packer& out, const ChainMessage& message);
bool get_message(Unpacker& in, ChainMessage& message);

/// How each chain of one rank ended (ChainOutcome without the final checkpoint, which
/// already travelled as a ChainState).
struct ChainEnding {
  int chain = 0;
  ChainEnd end = ChainEnd::kCompleted;
  Status status;
  std::int64_t step = 0;
  std::string reason;
};
void put_ending(Packer& out, const ChainEnding& ending);
bool get_ending(Unpacker& in, ChainEnding& ending);

void put_settings(Packer& out, const Settings& settings);
bool get_settings(Unpacker& in, Settings& settings);

void put_chain_state(Packer& out, const ChainState& state);
bool get_chain_state(Unpacker& in, ChainState& state);

}  // namespace credence::wire
