// Memory guard: refuse a job whose estimated footprint exceeds --max-memory before allocating.
//
// The CLI parses `--max-memory` (a size such as "8G", "500M", "1.5G", a byte count, or a
// share of physical memory such as "80%"; default 80% of physical memory) into a
// MemoryLimit, estimates what a job would hold at its peak, and calls check_memory()
// before the allocation. Estimates are upper-bound sketches from sizes known before any
// large read (file size, parameter count, samples, block rows), not measurements.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

#include "credence/status.h"

namespace credence {

/// A byte limit and where it came from, for messages ("--max-memory 500M",
/// "80% of 23.4 GiB physical memory").
struct MemoryLimit {
  std::uint64_t bytes = 0;
  std::string source;
};

/// Share of physical memory used when --max-memory is not given.
inline constexpr double kDefaultMemoryShare = 0.80;

/// Physical memory of this machine from sysconf(_SC_PHYS_PAGES x _SC_PAGESIZE);
/// 0 when the system does not say.
std::uint64_t physical_memory_bytes();

/// Parses a --max-memory value against `physical_bytes` (used for percentages):
/// "<number>[K|M|G|T][B|iB]" with binary units (1K = 1024 bytes; case-insensitive;
/// decimals allowed: "1.5G"), a plain byte count ("1048576"), or "<number>%" with
/// 0 < number <= 100. kInvalidInput naming the flag and the accepted forms for
/// anything else, for 0 bytes, for a size beyond 2^63 bytes, and for a percentage when
/// `physical_bytes` is 0.
Result<MemoryLimit> parse_memory_limit(std::string_view text, std::uint64_t physical_bytes);

/// parse_memory_limit(text, physical_memory_bytes()); an empty `text` gives the default
/// limit (kDefaultMemoryShare of physical memory, or no limit when that is unknown).
Result<MemoryLimit> memory_limit_from_flag(std::string_view text);

/// "512 B", "3.2 KiB", "1.5 GiB", ...
std::string format_bytes(std::uint64_t bytes);

/// ok when estimated_bytes <= limit.bytes (or limit.bytes is 0, meaning no limit);
/// otherwise kInvalidInput: "<what> would need about <estimate>, more than the memory
/// limit of <limit> (<source>); ..." with what to do.
Status check_memory(std::string_view what, std::uint64_t estimated_bytes, const MemoryLimit& limit);

/// x * y + ... without wrapping: saturates at UINT64_MAX, which any limit refuses.
std::uint64_t saturating_mul(std::uint64_t a, std::uint64_t b);
std::uint64_t saturating_add(std::uint64_t a, std::uint64_t b);

/// Size of a file, or 0 when it cannot be read (the read itself reports that).
std::uint64_t file_bytes_or_zero(const std::string& path);

/// Bytes a table parsed from a CSV file of `file_bytes` may hold at its peak: the file's
/// bytes plus one 8-byte number per cell, where the smallest cell ("1,") takes 2 bytes.
std::uint64_t estimate_table_bytes(std::uint64_t file_bytes);

/// What predict and assess hold at their peak while evaluating an ensemble.
struct EnsembleMemoryInputs {
  std::uint64_t parameters = 0;        // P
  std::uint64_t samples = 0;           // S kept samples used
  std::uint64_t block_rows = 0;        // rows per block (Predictor's block_rows)
  std::uint64_t widest_layer = 0;      // max(D, hidden widths, K)
  std::uint64_t layers = 0;            // hidden layers + output layer
  std::uint64_t threads = 1;           // blocks evaluated at once
  std::uint64_t table_file_bytes = 0;  // a CSV read whole first (assess); 0 when streamed
};

/// Estimated peak bytes of evaluating an ensemble: the samples as read and as the
/// predictor keeps them (2 x P x S floats), one block workspace per thread (two arrays
/// of block_rows x widest_layer floats per layer) and any table read whole
/// (estimate_table_bytes).
std::uint64_t estimate_ensemble_bytes(const EnsembleMemoryInputs& inputs);

/// What `credence train` holds at its peak, from sizes known before reading the data.
struct TrainMemoryInputs {
  std::uint64_t data_file_bytes = 0;    // size of the CSV file
  std::uint64_t parameters = 0;         // P, the flat parameter count
  std::uint64_t chains = 0;             // C, chains run at once
  std::uint64_t samples_in_memory = 0;  // kept samples queued for the writer, all chains
  std::uint64_t batch_rows = 0;         // minibatch rows B
  std::uint64_t widest_layer = 0;       // max(D, hidden widths, K)
  std::uint64_t layers = 0;             // hidden layers + output layer
};

/// Estimated peak bytes of a training run: the table (estimate_table_bytes) and its
/// float copy, per chain theta, gradient and up to three sampler arrays of P floats plus
/// minibatch workspaces (batch_rows x widest_layer floats, two per layer), and the queued
/// samples (P floats each). kInvalidInput when chains or parameters is 0.
Result<std::uint64_t> estimate_train_bytes(const TrainMemoryInputs& inputs);

}  // namespace credence
