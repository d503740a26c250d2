// libFuzzer target: opening and reading a run file (RunReader) made of arbitrary bytes.
// HDF5 opens paths, so each input is written to one temporary file, reused per process.
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <string>

#include "credence/ensemble.h"

namespace {

// A plain array, not a std::string: the atexit cleanup must outlive static destructors.
char scratch[4096];

const char* scratch_path() {
  if (scratch[0] == '\0') {
    const char* dir = std::getenv("TMPDIR");
    std::snprintf(scratch, sizeof scratch, "%s/credence_run_fuzz_XXXXXX",
                  dir != nullptr ? dir : "/tmp");
    const int fd = mkstemp(scratch);
    if (fd < 0) std::abort();
    close(fd);
    std::atexit([] { std::remove(scratch); });
  }
  return scratch;
}

bool write_bytes(const char* path, const std::uint8_t* data, std::size_t size) {
  std::FILE* file = std::fopen(path, "wb");
  if (file == nullptr) return false;
  const bool written = std::fwrite(data, 1, size, file) == size;
  return std::fclose(file) == 0 && written;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const char* path = scratch_path();
  if (!write_bytes(path, data, size)) return 0;
  credence::Result<std::unique_ptr<credence::RunReader>> opened = credence::RunReader::open(path);
  if (!opened.ok()) return 0;
  const credence::RunReader& run = **opened;
  // Every reader on a file that opened must answer with data or a Status, never crash.
  (void)run.samples();
  (void)run.sample_chains();
  (void)run.sample_steps();
  (void)run.sample_indices();
  (void)run.probe_log_lik();
  (void)run.probe_prob();
  (void)run.projections();
  (void)run.layer_sq_norms();
  for (int chain = 0; chain < run.header().chains && chain < 4; ++chain) (void)run.traces(chain);
  (void)run.traces(-1);
  (void)run.chain_states();
  (void)run.stored_temperature();
  return 0;
}
