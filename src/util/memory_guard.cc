// Memory limits: parsing --max-memory, physical memory and footprint estimates.
#include "util/memory_guard.h"

#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <limits>
#include <system_error>

namespace credence {
namespace {

constexpr std::uint64_t kMaxLimit = std::uint64_t{1} << 63;

std::string lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

Status bad_limit(std::string_view text, std::string_view why) {
  return Status::invalid_input(fmt::format(
      "--max-memory '{}': {}; give a size such as 8G, 500M or 1.5G (binary units), a byte "
      "count, or a share of physical memory such as 80%",
      text, why));
}

}  // namespace

std::uint64_t physical_memory_bytes() {
  const long pages = ::sysconf(_SC_PHYS_PAGES);
  const long page_size = ::sysconf(_SC_PAGESIZE);
  if (pages <= 0 || page_size <= 0) return 0;
  return saturating_mul(static_cast<std::uint64_t>(pages), static_cast<std::uint64_t>(page_size));
}

std::uint64_t saturating_mul(std::uint64_t a, std::uint64_t b) {
  if (a != 0 && b > std::numeric_limits<std::uint64_t>::max() / a) {
    return std::numeric_limits<std::uint64_t>::max();
  }
  return a * b;
}

std::uint64_t saturating_add(std::uint64_t a, std::uint64_t b) {
  return b > std::numeric_limits<std::uint64_t>::max() - a
             ? std::numeric_limits<std::uint64_t>::max()
             : a + b;
}

std::string format_bytes(std::uint64_t bytes) {
  static constexpr const char* kUnits[] = {"KiB", "MiB", "GiB", "TiB", "PiB", "EiB"};
  if (bytes < 1024) return fmt::format("{} B", bytes);
  double value = static_cast<double>(bytes) / 1024.0;
  int unit = 0;
  while (value >= 1024.0 && unit < 5) {
    value /= 1024.0;
    ++unit;
  }
  return fmt::format("{:.3g} {}", value, kUnits[unit]);
}

Result<MemoryLimit> parse_memory_limit(std::string_view text, std::uint64_t physical_bytes) {
  std::string_view rest = text;
  while (!rest.empty() && std::isspace(static_cast<unsigned char>(rest.front())))
    rest.remove_prefix(1);
  while (!rest.empty() && std::isspace(static_cast<unsigned char>(rest.back())))
    rest.remove_suffix(1);
  if (rest.empty()) return bad_limit(text, "the value is empty");
  // from_chars accepts "inf" and "nan"; only digits and one point make a size.
  std::size_t number_end = 0;
  while (number_end < rest.size() &&
         (std::isdigit(static_cast<unsigned char>(rest[number_end])) || rest[number_end] == '.')) {
    ++number_end;
  }
  double number = 0;
  const auto [end, error] = std::from_chars(rest.data(), rest.data() + number_end, number);
  if (number_end == 0 || error != std::errc() || end != rest.data() + number_end ||
      !std::isfinite(number)) {
    return bad_limit(text, "it does not start with a number");
  }
  const std::string unit = lower(rest.substr(number_end));
  double bytes = 0;
  std::string source = fmt::format("--max-memory {}", rest);
  if (unit == "%") {
    if (!(number > 0 && number <= 100))
      return bad_limit(text, "a share must be above 0% and at most 100%");
    if (physical_bytes == 0) {
      return bad_limit(
          text, "this system does not report its physical memory, so a share cannot be used");
    }
    bytes = std::floor(static_cast<double>(physical_bytes) * number / 100.0);
    source =
        fmt::format("--max-memory {}% of {} physical memory", number, format_bytes(physical_bytes));
  } else {
    double scale = 0;
    if (unit.empty() || unit == "b") {
      scale = 1;
    } else {
      static constexpr std::string_view kPrefixes = "kmgtp";
      const std::size_t power = kPrefixes.find(unit.front());
      const std::string_view suffix = std::string_view(unit).substr(1);
      if (power == std::string_view::npos || !(suffix.empty() || suffix == "b" || suffix == "ib")) {
        return bad_limit(
            text, fmt::format("'{}' is not a unit (use K, M, G or T)", rest.substr(number_end)));
      }
      scale = std::pow(1024.0, static_cast<double>(power + 1));
    }
    bytes = std::floor(number * scale);
  }
  if (bytes < 1) return bad_limit(text, "the limit must be at least one byte");
  if (bytes >= static_cast<double>(kMaxLimit))
    return bad_limit(text, "the limit is beyond 2^63 bytes");
  return MemoryLimit{static_cast<std::uint64_t>(bytes), std::move(source)};
}

Result<MemoryLimit> memory_limit_from_flag(std::string_view text) {
  const std::uint64_t physical = physical_memory_bytes();
  if (!text.empty()) return parse_memory_limit(text, physical);
  if (physical == 0) return MemoryLimit{0, "no limit: physical memory unknown"};
  const auto bytes =
      static_cast<std::uint64_t>(static_cast<double>(physical) * kDefaultMemoryShare);
  return MemoryLimit{bytes, fmt::format("the default, {:.0f}% of {} physical memory",
                                        kDefaultMemoryShare * 100, format_bytes(physical))};
}

Status check_memory(std::string_view what, std::uint64_t estimated_bytes,
                    const MemoryLimit& limit) {
  if (limit.bytes == 0 || estimated_bytes <= limit.bytes) return Status::ok_status();
  // A suggestion with a quarter of headroom, in whole MiB.
  const std::uint64_t suggested_mib =
      saturating_add(saturating_add(estimated_bytes, estimated_bytes / 4) >> 20, 1);
  return Status::invalid_input(fmt::format(
      "{} would need about {} of memory, more than the limit of {} ({}); make the job "
      "smaller, or if the machine has the memory raise the limit, e.g. --max-memory {}M",
      what, format_bytes(estimated_bytes), format_bytes(limit.bytes), limit.source, suggested_mib));
}

std::uint64_t file_bytes_or_zero(const std::string& path) {
  std::error_code error;
  const std::uintmax_t size = std::filesystem::file_size(path, error);
  return error ? 0 : static_cast<std::uint64_t>(size);
}

std::uint64_t estimate_table_bytes(std::uint64_t file_bytes) {
  // The whole file is read, then every cell (>= 2 bytes of text) becomes an 8-byte number.
  return saturating_add(file_bytes, saturating_mul(file_bytes / 2 + 1, 8));
}

std::uint64_t estimate_ensemble_bytes(const EnsembleMemoryInputs& in) {
  constexpr std::uint64_t kFloat = sizeof(float);
  std::uint64_t total =
      saturating_mul(saturating_mul(saturating_mul(in.parameters, in.samples), 2), kFloat);
  const std::uint64_t workspace =
      saturating_mul(saturating_mul(saturating_mul(in.block_rows, in.widest_layer),
                                    saturating_mul(std::max<std::uint64_t>(in.layers, 1), 2)),
                     kFloat);
  total = saturating_add(total, saturating_mul(workspace, std::max<std::uint64_t>(in.threads, 1)));
  if (in.table_file_bytes > 0)
    total = saturating_add(total, estimate_table_bytes(in.table_file_bytes));
  return total;
}

Result<std::uint64_t> estimate_train_bytes(const TrainMemoryInputs& in) {
  if (in.chains == 0 || in.parameters == 0) {
    return Status::invalid_input(
        "estimating training memory needs at least one chain and one parameter");
  }
  constexpr std::uint64_t kFloat = sizeof(float);
  // The parsed table, then its encoded float copy (at most half its 8-byte cells' size).
  std::uint64_t total = estimate_table_bytes(in.data_file_bytes);
  total = saturating_add(total, saturating_mul(in.data_file_bytes / 2 + 1, kFloat));
  // Per chain: theta, gradient and up to three sampler arrays, plus the minibatch
  // activations and their gradients (two arrays per layer of batch_rows x widest_layer).
  const std::uint64_t per_chain = saturating_add(
      saturating_mul(saturating_mul(in.parameters, 5), kFloat),
      saturating_mul(saturating_mul(saturating_mul(in.batch_rows, in.widest_layer),
                                    saturating_mul(std::max<std::uint64_t>(in.layers, 1), 2)),
                     kFloat));
  total = saturating_add(total, saturating_mul(per_chain, in.chains));
  // Kept samples waiting in the writer's queue.
  total = saturating_add(
      total, saturating_mul(saturating_mul(in.samples_in_memory, in.parameters), kFloat));
  return total;
}

}  // namespace credence
