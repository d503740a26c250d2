// libFuzzer target: a run file made of arbitrary bytes, from open to prediction. Every
// input is opened as predict does (validation refuses damage) and as inspect does (damage
// kept and reported); each reader method runs; diagnose's reads run; and from each input
// that opens, a Predictor is built and predicts a small fixed table whose columns are the
// model's own (numbers, levels it knows, an unseen level, missing cells), so the encoder
// and the forward pass see whatever the file claims. A non-finite prediction is a finding.
// HDF5 opens paths, so each input is written to one temporary file, reused per process.
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <string>
#include <vector>

#include "credence/data.h"
#include "credence/ensemble.h"
#include "credence/predict.h"
#include "credence/run_diagnostics.h"

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

std::string quoted(const std::string& text) {
  std::string out = "\"";
  for (char c : text) {
    out += c;
    if (c == '"') out += '"';
  }
  return out + "\"";
}

// Four rows over the model's feature columns: numeric cells 0.5, -3, 1e6 and missing;
// categorical cells the first and last known level, an unseen one and missing.
std::string fixed_table(const credence::Preprocessing& p, std::vector<std::string>& text) {
  std::string csv;
  for (std::size_t i = 0; i < p.features.size(); ++i) {
    csv += (i ? "," : "") + quoted(p.features[i].name);
  }
  csv += "\n";
  for (int row = 0; row < 4; ++row) {
    for (std::size_t i = 0; i < p.features.size(); ++i) {
      const credence::FeatureEncoding& f = p.features[i];
      std::string cell;
      if (f.type == credence::ColumnType::kNumeric) {
        const char* values[] = {"0.5", "-3", "1e6", ""};
        cell = values[row];
      } else {
        if (row == 0 && !f.categories.empty()) cell = quoted(f.categories.front());
        if (row == 1 && !f.categories.empty()) cell = quoted(f.categories.back());
        if (row == 2) cell = "never-seen-level";
      }
      csv += (i ? "," : "") + cell;
    }
    csv += "\n";
  }
  for (const credence::FeatureEncoding& f : p.features) {
    if (f.type == credence::ColumnType::kCategorical) text.push_back(f.name);
  }
  return csv;
}

void predict_fixed_table(const credence::RunReader& run) {
  credence::PredictorOptions options;
  options.block_rows = 4;
  credence::Result<credence::Predictor> made = credence::Predictor::create(run, options);
  if (!made.ok()) return;
  credence::Predictor& predictor = *made;
  credence::ReadOptions read;
  read.na_tokens = {""};
  const std::string csv = fixed_table(predictor.preprocessing(), read.text_columns);
  credence::Result<credence::Table> table = credence::parse_table(csv, "fuzz.csv", read);
  if (!table.ok()) return;
  credence::Workspace<float> workspace = predictor.make_workspace();
  credence::EnsembleAverager averager;
  credence::Prediction prediction;
  const std::vector<std::int64_t> rows = {0, 1, 2, 3};
  for (credence::UnseenPolicy policy :
       {credence::UnseenPolicy::kIgnore, credence::UnseenPolicy::kError}) {
    predictor.set_unseen_policy(policy);
    if (!predictor.predict_rows(workspace, averager, *table, rows, prediction).ok()) continue;
    // "No NaN output ever": a prediction that succeeds is finite.
    if (!prediction.probabilities.allFinite() || !prediction.entropy.allFinite() ||
        !prediction.mutual_information.allFinite()) {
      std::abort();
    }
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const char* path = scratch_path();
  if (!write_bytes(path, data, size)) return 0;
  // As inspect opens it: damage kept, header and summary read.
  {
    auto shown = credence::RunReader::open(path, credence::RunOpen::kReportDamage);
    if (shown.ok()) {
      (void)(*shown)->header().net_text.size();
      (void)(*shown)->summary().kept_per_chain.size();
      if ((*shown)->damage().ok()) (void)(*shown)->stored_temperature();
    }
  }
  credence::Result<std::unique_ptr<credence::RunReader>> opened = credence::RunReader::open(path);
  if (!opened.ok()) return 0;
  const credence::RunReader& run = **opened;
  predict_fixed_table(run);
  (void)credence::diagnose_run(run);
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
