// Pieces shared by the run file's writer, reader and merge: header, tables, checkpoints.
//
// Every function here may throw H5::Exception; callers run them inside h5::guard().
#pragma once

#include <H5Cpp.h>

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "credence/ensemble.h"

namespace credence::run_file {

// --- header (header_io.cc, preprocessing_io.cc) ---

/// Writes the root format attributes and every header group.
void write_header(H5::H5File& file, const RunHeader& header);
/// kCorrupt naming `path` unless the root carries our format name and version.
Status check_format(const H5::H5File& file, const std::string& path);
/// Reads every header group back. REQUIRES: check_format passed.
RunHeader read_header(const H5::H5File& file);

void write_preprocessing(H5::Group& group, const Preprocessing& preprocessing);
/// Throws H5::Exception on a missing dataset or an unknown enum name.
Preprocessing read_preprocessing(const H5::Group& group);

/// Refuses a header the layout cannot hold (kInvalidInput or kInternal).
Status validate_header(const RunHeader& header);

// --- validation (validate.cc) ---

struct Committed;
/// The structural checks of a header being opened: the encodings tile the network's
/// input, widths, category lists, preprocessing constants, classes, split rows, and the
/// stored net against the parameter and layer counts. kCorrupt naming the dataset and
/// index of the first damage found (without the file's path).
Status validate_header_fields(const RunHeader& header);
/// The same for the active checkpoint slot's counts and resumable chain states.
Status validate_committed(const Committed& committed);

// --- tables and checkpoints (checkpoint.cc) ---

/// What the active checkpoint slot says: the committed counts and chain states.
struct Committed {
  int active_slot = -1;                         // -1: nothing committed yet
  std::int64_t samples = 0;                     // committed sample rows
  std::vector<std::int64_t> samples_per_chain;  // (C)
  std::vector<std::int64_t> traces;             // (C) committed trace rows per chain
  std::vector<bool> has_state;                  // (C)
  std::vector<ChainState> states;               // (C); next_step 0, empty arrays if !has_state
  bool costs_recorded = false;                  // the slot has seconds and gradient_evals
};

/// Creates /samples, /traces, both checkpoint slots and /run (status "running",
/// no active slot). Must run before SWMR starts.
void create_tables(H5::H5File& file, const RunHeader& header);
/// Writes `committed` into `slot` (0 or 1); does not touch the active marker.
void write_slot(H5::H5File& file, int slot, const RunHeader& header, const Committed& committed);
void write_active_slot(H5::H5File& file, int slot);
/// Reads the active slot (all zeros when none).
Committed read_committed(const H5::H5File& file, const RunHeader& header);

void write_run_status(H5::H5File& file, RunStatus status);
/// Throws when the stored name is unknown.
RunStatus read_run_status(const H5::H5File& file);

std::optional<RunStatus> parse_run_status(const std::string& name);
std::optional<ChainStatus> parse_chain_status(const std::string& name);

/// Rows of theta per chunk: about layout::kThetaChunkBytes, at least 1.
std::int64_t theta_chunk_rows(std::int64_t parameters);

}  // namespace credence::run_file
