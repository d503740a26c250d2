// A pre-check of an HDF5 file's global heap collections, where variable-length strings
// live, before the HDF5 library parses them.
#pragma once

#include <string>

#include "credence/status.h"

namespace credence::run_file {

/// Walks every global heap collection ("GCOL", HDF5 file format specification, section
/// III.E) in the file at `path` and refuses (kCorrupt, naming the byte offset) a
/// collection whose object list cannot be walked to its end: an object whose size runs
/// past the collection, or a free-space object too small to hold its own header. HDF5
/// 1.10 loops forever on the latter (a fuzzed run file found it), so the check must come
/// before any variable-length string is read. A signature that is not followed by a
/// plausible collection header (version 1, size from 4096 bytes to the end of the file)
/// is sample data, not a collection, and is skipped.
Status check_global_heaps(const std::string& path);

}  // namespace credence::run_file
