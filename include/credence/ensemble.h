// ensemble: the run file, one HDF5 file per training run, the only thing predict needs.
//
// A run file holds provenance, the data file's digest and split, the preprocessing,
// the net text, every setting and seed, per-chain traces, the kept samples (an
// extendable chunked float32 dataset [samples x parameters] with the chain and step of
// each), tracked summaries per kept sample, a resumable checkpoint per chain and a
// status. docs/run-file.md documents the layout group by group so that a Python user
// can rebuild predictions with h5py and numpy alone; src/ensemble/layout.h is the only
// place that spells group and dataset names.
//
// Durability. The writer keeps the file in HDF5's single-writer/multiple-reader mode
// (SWMR), whose metadata ordering keeps the file openable after a crash. Rows become
// visible in units of a commit: commit() writes the queued rows, flushes, then writes
// each chain's latest state into the inactive of two checkpoint slots together with
// the committed row counts, flushes, and only then marks that slot active. Readers
// and resume use the active slot's counts and ignore rows past them, so after kill -9
// at any moment the file holds every committed row, never a torn one, and the count
// of kept samples never goes backwards. The state stored for a chain is always the
// state right after its last committed row, so resuming regenerates nothing twice.
//
// Threads: a RunWriter is used by one thread (the CLI runs a writer thread fed by a
// queue); a RunReader by one thread at a time. Different objects are independent.
// The ensemble module knows nothing of samplers: settings arrive as named values and
// chain state as NamedArrays; it parses the stored net text only to validate a file.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <utility>
#include <variant>
#include <vector>

#include "credence/data.h"
#include "credence/named_arrays.h"
#include "credence/status.h"

namespace credence {

/// Version of the layout written by this build; readers refuse other versions.
/// Version 2: every string is fixed-width (version 1 wrote variable-length ones).
inline constexpr int kRunFormatVersion = 2;

/// Where a run stands. kRunning is also what a crashed run shows until resumed.
enum class RunStatus { kRunning, kComplete, kInterrupted, kDiverged, kFailed };
std::string_view run_status_name(RunStatus status);  // "running", "complete", ...

/// Where one chain stands.
enum class ChainStatus { kRunning, kCompleted, kDiverged, kStopped, kFailed };
std::string_view chain_status_name(ChainStatus status);

/// Everything fixed when a run starts.
struct RunHeader {
  // Provenance.
  std::string tool_version;              // credence::kVersion
  std::string command_line;              // as typed, for the record
  std::string created_utc;               // ISO 8601, e.g. "2026-12-02T01:30:00Z"
  int mpi_ranks = 1;                     // processes that ran the chains (mpirun -n)
  int mpi_hosts = 1;                     // distinct hosts among them
  // Data.
  std::string data_file;                 // the path given on the command line
  std::string data_sha256;               // hex digest of the data file's bytes
  std::int64_t data_rows = 0;            // rows in the data file
  std::vector<std::int64_t> train_rows;  // 0-based data rows of each split, sorted
  std::vector<std::int64_t> val_rows;
  std::vector<std::int64_t> test_rows;
  Preprocessing preprocessing;           // fitted on train_rows
  // Model.
  std::string net_text;                  // the net file text (canonical form)
  std::int64_t parameters = 0;           // P, the flat parameter count
  // Sampling.
  Settings settings;                     // every setting and seed, by name
  int chains = 0;                        // C
  std::int64_t samples_per_chain = 0;    // S planned per chain
  // Tracked summaries (docs/methods.md 10.3), one row per kept sample.
  std::vector<std::int64_t> probe_rows;  // R data rows (from val_rows) whose predictions are tracked
  /// (R) the probe rows' class indices, so diagnose and report judge a run as train did
  /// (run_verdict.h); empty in files of builds before them.
  std::vector<std::int32_t> probe_labels;
  int projections = 4;                   // random projections u_j^T theta per sample
  int layers = 0;                        // L: squared norm per layer per sample
  /// Names and sizes of every per-chain state array (sampler and minibatch
  /// position), so the checkpoint datasets can be created before SWMR starts;
  /// the values are ignored.
  NamedArrays state_template;
};

/// One kept sample with its tracked summaries. Spans are valid during the call.
struct SampleRecord {
  int chain = 0;
  std::int64_t step = 0;                   // step after which theta was taken
  std::int64_t index = 0;                  // 0-based kept number within the chain
  std::span<const float> theta;            // (P)
  double probe_log_lik = 0;                // sum over probe rows of log p(y|x, theta)
  std::span<const float> probe_prob;       // (R) p(y_r | x_r, theta) of each probe row's label
  std::span<const float> projections;      // (projections)
  std::span<const float> layer_sq_norms;   // (L)
  /// (2L) a learned prior's block precisions (layer 1 weights, layer 1 biases, ...), or
  /// empty when the prior is fixed (stored as NaN).
  std::span<const double> prior_precision;
};

/// One trace row; NaN where a quantity does not apply.
struct TraceRecord {
  int chain = 0;
  std::int64_t step = 0;
  double potential = 0;   // minibatch U~ (full U for hmc/rhmc)
  double accuracy = 0;    // minibatch accuracy, NaN if unknown
  double step_size = 0;   // in U units
  double speed_ratio = 0; // relativistic methods: mean |v|/c, else NaN
  double acceptance = 0;  // hmc/rhmc: Metropolis acceptance probability, else NaN
};

/// A chain's state right after its last sent row: enough to resume it bit for bit.
struct ChainState {
  int chain = 0;
  std::int64_t next_step = 0;            // first step still to run
  std::int64_t kept = 0;                 // samples kept so far
  double seconds = 0;                    // wall seconds run, resumed sessions included
  std::int64_t gradient_evals = 0;       // gradient evaluations made
  std::vector<float> theta;              // (P)
  NamedArrays state;                     // sampler state + minibatch position
  ChainStatus status = ChainStatus::kRunning;
  std::string reason;                    // empty unless diverged/stopped/failed
};

class RunReader;

/// Creates, appends to and finishes a run file. See the file comment.
class RunWriter {
 public:
  /// Creates `path` with every group and dataset, writes the header, and enters
  /// SWMR mode. An existing file is refused (kInvalidInput, naming --force) unless
  /// `overwrite`. kIoError when the file cannot be created.
  static Result<std::unique_ptr<RunWriter>> create(const std::string& path,
                                                   const RunHeader& header, bool overwrite);

  /// Reopens a run for --resume, dropping uncommitted rows, and returns the writer. A
  /// file whose writer was killed is rebuilt: its committed rows are copied into a fresh
  /// file that replaces it, because HDF5's on-disk bookkeeping after a kill (the end of
  /// allocated space, say) can lag what its indexes name. `states` receives every chain's
  /// last committed state (next_step 0 and empty arrays for a chain never
  /// checkpointed). kCorrupt for a damaged file or another format version;
  /// kInvalidInput for a run that is already complete.
  static Result<std::unique_ptr<RunWriter>> reopen(const std::string& path,
                                                   std::vector<ChainState>& states);

  ~RunWriter();  // closes the file; an unfinished run stays kRunning

  const RunHeader& header() const;

  /// Queue rows for the next commit. Samples arrive in any chain order.
  /// REQUIRES: sizes match the header.
  Status append_sample(const SampleRecord& sample);
  Status append_trace(const TraceRecord& trace);
  /// The chain's latest state; only the newest per chain is written at commit.
  Status set_chain_state(ChainState state);

  /// Writes queued rows and chain states durably (see the file comment).
  Status commit();
  /// Commits, records the final run status, leaves SWMR mode and closes.
  Status finish(RunStatus status);

  /// Rows committed so far.
  std::int64_t committed_samples() const;

 private:
  struct Impl;
  explicit RunWriter(std::unique_ptr<Impl> impl);
  static Result<std::unique_ptr<RunWriter>> rebuild(std::unique_ptr<RunReader> run,
                                                    const std::string& path,
                                                    std::vector<ChainState>& states);
  std::unique_ptr<Impl> impl_;
};

/// What `credence inspect` shows of a run file.
struct RunSummary {
  RunStatus status = RunStatus::kRunning;
  bool recovered = false;                 // opened after a crash (SWMR flags were set)
  std::int64_t samples = 0;               // committed kept samples, all chains
  std::vector<std::int64_t> kept_per_chain;   // (C)
  std::vector<ChainStatus> chain_status;      // (C)
  std::vector<std::string> chain_reason;      // (C)
  std::vector<std::int64_t> steps_per_chain;  // (C) next_step of the committed state
  /// (C) wall seconds each chain has run and gradient evaluations it has made, up to its
  /// committed state; empty for a file written before these were recorded.
  std::vector<double> seconds_per_chain;
  std::vector<std::int64_t> gradient_evals_per_chain;
  std::int64_t file_bytes = 0;
};

/// A temperature fitted after training (`credence assess --temperature-scale
/// --save-temperature`), applied member-wise by predict (fit_ensemble_temperature).
struct StoredTemperature {
  double temperature = 1;
  std::int64_t samples = 0;   // committed samples of the ensemble it was fitted for
  std::string fitted_on;      // e.g. "validation split, 450 rows"
  double nll_before = 0;      // NLL on those rows at tau = 1
  double nll_after = 0;       // ... at the fitted tau
  std::string fitted_utc;     // ISO 8601
};

/// What RunReader::open does with a file that reads but fails validation.
enum class RunOpen {
  kRefuseDamage,  // return the damage as kCorrupt (every command but inspect)
  kReportDamage,  // open anyway and keep it in damage(): for showing what the file holds
};

/// Reads a run file. Opens files left by a crash without modifying them.
///
/// A run file is untrusted input. open() reads the header and the committed counts,
/// then validates every structural field against the stored network and the other
/// fields (src/ensemble/validate.cc) and the tables against both, including that every
/// committed sample and tracked summary is finite (docs/run-file.md, "Validation").
class RunReader {
 public:
  /// kCorrupt (exit 2) for a truncated, non-HDF5 or other-version file, naming the
  /// path (and the version found and the one expected), and for a file that fails
  /// validation, naming the dataset and index; kInvalidInput (exit 2) for a
  /// missing file. A file whose writer was killed (or is still writing) opens
  /// read-only in SWMR mode with summary().recovered set.
  static Result<std::unique_ptr<RunReader>> open(const std::string& path,
                                                 RunOpen mode = RunOpen::kRefuseDamage);
  ~RunReader();

  /// What validation found (ok unless opened with RunOpen::kReportDamage and damaged).
  /// Only header() and summary() may be used on a damaged file.
  const Status& damage() const;

  const RunHeader& header() const;
  const RunSummary& summary() const;

  /// Committed samples, one per column: (P, S) float, plus each one's chain and step.
  Result<Eigen::MatrixXf> samples() const;
  Result<std::vector<std::int32_t>> sample_chains() const;   // (S)
  Result<std::vector<std::int64_t>> sample_steps() const;    // (S)
  /// Each committed sample's 0-based kept number within its chain.
  Result<std::vector<std::int64_t>> sample_indices() const;  // (S)
  /// Tracked summaries of the committed samples.
  Result<std::vector<double>> probe_log_lik() const;         // (S)
  Result<Eigen::MatrixXf> probe_prob() const;                // (R, S)
  Result<Eigen::MatrixXf> projections() const;               // (projections, S)
  Result<Eigen::MatrixXf> layer_sq_norms() const;
  /// (2L, S) the learned prior's block precisions per sample; NaN where the prior was
  /// fixed, and everywhere for a file written before they were recorded.
  Result<Eigen::MatrixXd> prior_precisions() const;            // (L, S)
  /// The committed trace rows of one chain, in step order.
  Result<std::vector<TraceRecord>> traces(int chain) const;
  /// Every chain's last committed state, as reopen() would return it (next_step 0 and
  /// empty arrays for a chain never checkpointed); for merge and inspection.
  Result<std::vector<ChainState>> chain_states() const;      // (C)
  /// The stored temperature, if any. A temperature fitted for a different number of
  /// committed samples (the run was resumed since) is stale: empty, with a warning.
  Result<std::optional<StoredTemperature>> stored_temperature() const;

 private:
  struct Impl;
  explicit RunReader(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

/// Stores (replacing any earlier one) a temperature in a finished run file. Refuses
/// (kInvalidInput) a run still being written or left by a crash: resume it first.
/// kIoError when the file cannot be written. No RunReader of the file may be open.
Status store_temperature(const std::string& path, const StoredTemperature& temperature);

/// Joins runs of the same net and preprocessing into `output`, renumbering chains
/// (inputs' chains in order). Refuses (kInvalidInput, naming the first difference)
/// runs whose net text, preprocessing, parameter count, method, temperature or tempering
/// differ; kCorrupt for a bad
/// input. The output is written to a temporary name and renamed.
Status merge_runs(std::span<const std::string> inputs, const std::string& output,
                  bool overwrite);

}  // namespace credence
