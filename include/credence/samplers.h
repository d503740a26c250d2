// Samplers and optimizers over a flat parameter vector, and the chain driver.
//
// A Sampler is one method's settings, state and step (STYLE.md rule 11): step()
// asks the PotentialFn for U and its gradient (samplers_potential.h holds that
// contract, with a complete example), updates theta and its own state, and checks
// for divergence. run_chains() runs C independent chains in parallel with OpenMP,
// one thread per chain and single-threaded inside it, with burn-in, thinning,
// the step-size schedule, hooks, a stop flag and per-chain outcomes. A Sampler is
// used from one thread at a time; run_chains() may be called from any thread.
//
// Checkpoints. on_checkpoint receives a chain's complete state (ChainCheckpoint) after
// every kept sample, whenever the caller bumps RunControl::checkpoint_request (from any
// thread; served at the chain's next step boundary), and once when the chain ends.
// Passing those checkpoints back as `resume` continues each chain bit for bit, the
// potential's minibatch position included. Per chain, hooks run in step order, and
// every on_sample / on_trace of steps < next_step comes before the on_checkpoint that
// carries next_step, so a writer that stores rows and state together stays consistent.
//
//   SamplerSettings settings;                    // sgld, lr 1e-2 on the mean loss
//   ChainSettings chains;                        // 4 chains, 1000 burn-in, ...
//   ChainHooks hooks;
//   hooks.on_sample = [&](const KeptSample& s) { store(s.chain, s.step, s.theta); };
//   hooks.on_checkpoint = [&](const ChainCheckpoint& c) { save(c); };
//   std::atomic<bool> stop{false};  std::atomic<std::uint64_t> request{0};
//   RunControl control{.stop = &stop, .checkpoint_request = &request};
//   Result<RunOutcome> run = run_chains(settings, chains, p, factory, init, hooks, control);
//   // later: run_chains(settings, chains, p, factory, init, hooks, control, saved);
#pragma once

#include <atomic>
#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "credence/named_arrays.h"
#include "credence/samplers_potential.h"
#include "credence/samplers_settings.h"
#include "credence/status.h"

namespace credence {

/// A sampler's whole state as plain named arrays (momentum, moments, step count,
/// adapted step size and masses, RNG words), so a checkpoint can store it in any
/// format and resume bit for bit.
using SamplerState = NamedArrays;

/// Where a step sits in its chain; run_chains() fills it from the schedule.
struct StepContext {
  std::int64_t step = 0;   // t = 0, 1, 2, ... within the chain
  double step_size = 0.0;  // this step's eps / eta / a (U units), from the schedule
  bool explore = false;    // run the T = 0 limit this step (cyclical exploration)
  bool burn_in = false;    // adaptation (dual averaging, masses, psgld's G) allowed
  std::int64_t total_steps = 0;  // the chain's whole budget; 0 = unknown (santa-opt never refines)
};

/// What one step reports for traces.
struct StepReport {
  double potential = 0.0;             // U~ at theta before the step (U for hmc/rhmc)
  std::optional<double> accuracy;     // minibatch accuracy, if the potential gave it
  double step_size = 0.0;             // the step actually used (after jitter/adaptation)
  std::optional<double> speed_ratio;  // relativistic methods: mean |v_i| / c_i
  std::optional<double> acceptance;   // hmc, rhmc: Metropolis acceptance probability
  std::int64_t clipped = 0;           // coordinates whose noise correction was clipped
};

/// One method's settings + state + step.
class Sampler {
 public:
  /// Builds the sampler for P parameters, its state sized now so step() never
  /// allocates. `rows` is N (converts learning rates); `seed` seeds its Rng.
  /// Fails with kInvalidInput on bad settings (validate()).
  static Result<std::unique_ptr<Sampler>> create(const SamplerSettings& settings,
                                                 std::int64_t parameters, std::int64_t rows,
                                                 std::uint64_t seed);
  virtual ~Sampler() = default;

  /// One step: evaluate the potential at theta, check it, update theta and state.
  /// Returns kDiverged (theta untouched) when U or the gradient is not finite,
  /// or an error from the potential. theta: (P).
  virtual Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
                      StepReport& report) = 0;

  /// The full state, and back. restore_state fails with kCorrupt when an array is
  /// missing or has the wrong size.
  virtual SamplerState save_state() const = 0;
  virtual Status restore_state(const SamplerState& state) = 0;

  /// The step size in U units this sampler was built with (before the schedule).
  virtual double base_step_size() const = 0;

  /// The potential changed between steps (PotentialFn::before_step): forget any cached
  /// U or gradient at the current theta. The default keeps nothing cached.
  virtual void target_changed() {}
};

/// Scores theta on rows the chain does not train on (lower is better; for example the
/// mean NLL of the validation rows). Called from the chain's own thread only.
using HeldOutScore = std::function<Result<double>(ConstThetaRef theta)>;

/// Optimizers: end a chain when its held-out score stops improving, and keep its best
/// iterate instead of its last (early stopping; "Early Stopping - But When?", Neural
/// Networks: Tricks of the Trade, 1998). Only for an optimizer's layout of one kept
/// sample (thin 1, samples 1); the kept sample is the best iterate, its step the step
/// after which it was scored, and the chain's final checkpoint says why it ended.
struct EarlyStopSettings {
  /// Score theta after every this many steps (and after the last); 0 = off: the chain
  /// runs its whole budget and keeps its last iterate. Default 0.
  std::int64_t every = 0;
  /// Scores in a row without an improvement of at least min_improvement that end the
  /// chain. Default 10.
  std::int64_t patience = 10;
  /// Never end before this many steps. Default 0.
  std::int64_t min_steps = 0;
  /// The smallest decrease of the score that counts as an improvement. Default 1e-4
  /// (in mean NLL per row: well below any difference that shows in a score table).
  double min_improvement = 1e-4;
  /// One scorer per chain (given the chain's global index); required when every > 0.
  std::function<HeldOutScore(int chain)> scorer;
};

/// Prefix of early stopping's arrays inside ChainCheckpoint::state (best iterate, best
/// score, checks without improvement).
inline constexpr std::string_view kEarlyStopStatePrefix = "early.";

/// The names and sizes of early stopping's checkpoint arrays for P parameters (for a
/// writer that creates its checkpoint layout up front).
NamedArrays early_stop_state_template(std::int64_t parameters);

/// Layout of one run of chains.
struct ChainSettings {
  int chains = 4;               // C. Default 4 (docs/methods.md 1: C >= 4 for R-hat).
  std::int64_t burn_in = 1000;  // steps before the first kept sample. Default 1000.
  std::int64_t thin = 10;       // keep every thin-th step after burn-in. Default 10.
  std::int64_t samples = 100;   // kept samples per chain S. Default 100.
  std::uint64_t seed = 0;       // run seed; chain c's sampler uses stream_seed(seed, kSampler, c).
  int threads = 0;              // OpenMP threads; 0 = OpenMP's default.
  /// A chain diverges when U~ exceeds this (or is not finite). Default 1e30.
  double max_potential = 1e30;
  /// Call on_trace every this many steps (1 = every step). Default 1.
  std::int64_t trace_every = 1;
  /// Global indices of the chains this call runs, when it runs a share of a larger
  /// run (several processes, one run): seeds, factory, init, hooks and checkpoints use
  /// these indices, and `resume` follows their order. Empty = chains 0 .. chains - 1.
  /// REQUIRES: empty, or `chains` entries, each >= 0 and distinct.
  std::vector<int> chain_ids;
  /// Optimizers: stop on a held-out score and keep the best iterate. Default off.
  EarlyStopSettings early_stop;
};

/// A kept sample, valid only during the hook call.
struct KeptSample {
  int chain = 0;
  std::int64_t step = 0;   // 0-based step after which theta was taken
  std::int64_t index = 0;  // 0-based kept-sample number within the chain
  ConstThetaRef theta;     // (P)
  /// The model's hyperparameters at this sample (PotentialFn::hyperparameters: a learned
  /// prior's block precisions); empty when it has none.
  std::span<const double> hyperparameters;
};

/// One trace row.
struct TraceRow {
  int chain = 0;
  std::int64_t step = 0;
  StepReport report;
};

/// How a chain ended.
enum class ChainEnd { kCompleted, kDiverged, kStopped, kFailed };

/// Why on_checkpoint was called.
enum class CheckpointCause {
  kKeptSample,  // right after on_sample: the state after the kept step
  kRequested,   // RunControl::checkpoint_request changed: the state at a step boundary
  kEnded,       // the chain ended (completed, diverged, stopped or failed)
};

/// Prefix of the potential's arrays inside ChainCheckpoint::state. A dot, not a slash:
/// the run file stores each array under its name, and HDF5 reads '/' as a group path.
inline constexpr std::string_view kModelStatePrefix = "model.";

/// A chain's position and complete state, enough to resume it bit for bit.
struct ChainCheckpoint {
  int chain = 0;               // 0-based chain (resume uses the list position instead)
  std::int64_t next_step = 0;  // the first step still to run
  std::int64_t kept = 0;       // samples kept so far
  /// Wall seconds the chain has run and gradient evaluations (calls of the potential's
  /// minibatch() or full()) it has made, since its start, resumed runs included.
  double seconds = 0;
  std::int64_t gradient_evals = 0;
  Eigen::VectorXf theta;       // (P)
  /// The sampler's state arrays (Sampler::save_state) under their own names, and the
  /// potential's (PotentialFn::save_state) under kModelStatePrefix + name.
  NamedArrays state;
  CheckpointCause cause = CheckpointCause::kEnded;
  /// Empty while the chain runs; how it ended in the checkpoint of CheckpointCause::kEnded.
  std::optional<ChainEnd> end;
  Status status;       // ok unless the chain ended otherwise than completed
  std::string reason;  // empty unless diverged, stopped or failed, or early stopping ended it
};

/// Hooks at fixed points of each chain. run_chains() serialises them with one
/// mutex: no two hook calls overlap, but they may come from different threads,
/// in an order that interleaves chains. A hook may set the stop flag or bump the
/// checkpoint request. Arguments are valid only during the call.
///
/// Order within one chain: hooks are called in step order, from the chain's thread.
/// After step t: on_trace(t) if traced, then, if t is kept, on_sample(t) followed by
/// on_checkpoint (kKeptSample, next_step t + 1). A requested checkpoint comes at the
/// boundary before step next_step; the final one (kEnded) comes last. So every
/// on_sample / on_trace of steps < next_step precedes the checkpoint carrying
/// next_step, and none of later steps does.
struct ChainHooks {
  std::function<void(const KeptSample&)> on_sample;
  std::function<void(const TraceRow&)> on_trace;
  std::function<void(const ChainCheckpoint&)> on_checkpoint;
};

/// How a caller steers running chains; every pointer may be null.
struct RunControl {
  /// Checked before each step; when true each chain ends as kStopped at that boundary.
  const std::atomic<bool>* stop = nullptr;
  /// A generation counter: bump it (fetch_add, from any thread, at any time) to ask
  /// every chain for a checkpoint. Each chain remembers the last value it served
  /// (starting from 0) and, at its next step boundary where the value differs, calls
  /// on_checkpoint (kRequested). Any checkpoint a chain sends counts as serving the
  /// value it read just before, so requests never queue up.
  const std::atomic<std::uint64_t>* checkpoint_request = nullptr;
};

/// Per-chain result.
struct ChainOutcome {
  ChainEnd end = ChainEnd::kCompleted;
  /// Ok when completed; else kDiverged, kInterrupted, or the failure the potential
  /// or the sampler returned (its own code and message).
  Status status;
  std::int64_t step = 0;  // steps run (for kDiverged: the step that diverged)
  std::string reason;     // what happened; empty when completed without early stopping
  std::int64_t kept = 0;
  double mean_acceptance = 0.0;  // hmc, rhmc: mean after burn-in; else 0
  ChainCheckpoint checkpoint;    // the final checkpoint (as on_checkpoint saw it last)
};

struct RunOutcome {
  std::vector<ChainOutcome> chains;
  /// Ok when every chain completed; otherwise the first non-completed chain's
  /// status prefixed with "chain <c>: " (kDiverged with a hint to lower the step
  /// size, kInterrupted, or a failure from the potential).
  Status status;
};

/// Writes chain `chain`'s starting point into theta (P). Called once per fresh chain.
using InitFn = std::function<Status(int chain, ThetaRef theta)>;

/// Runs settings.chains chains of `parameters` coordinates (chains 0 .. C - 1, or the
/// global indices in chains.chain_ids, which then stand for `chain` below; resume[i]
/// belongs to the i-th chain run). Each chain: its own
/// PotentialFn (factory), Sampler seeded with stream_seed(seed, SeedPurpose::kSampler,
/// chain) (util/rng.h), theta from
/// init (or from resume[chain] when resume is non-empty: theta, sampler state and the
/// potential's "model." arrays), then steps t = next_step .. burn_in + thin * samples - 1.
/// After step t (0-based) the chain keeps theta when t >= burn_in and
/// (t - burn_in + 1) is a multiple of thin. Divergence stops that chain only.
/// control.stop is checked before each step; checkpoints follow ChainHooks' order.
/// Results depend on the seed only, not on the number of threads, and a chain resumed
/// from any of its checkpoints continues exactly as if it had never stopped. With a
/// cyclical schedule, steps of the exploration stage are never kept, so a chain may
/// keep fewer than `samples` (ChainOutcome::kept says how many). The step loop
/// allocates nothing beyond what the potential and sampler do; a checkpoint does.
/// After a divergence or failure the final checkpoint records where the chain stood
/// (the failed step may already have consumed draws, and theta may be the non-finite
/// one that was caught): resume from the checkpoint before it to replay exactly.
/// ChainOutcome::mean_acceptance covers only the steps run by this call.
/// A resume entry with next_step 0 and an empty theta (a chain never checkpointed)
/// starts that chain afresh from init.
/// Fails (without running) on invalid settings or a resume list of the wrong size; a
/// chain whose resume state does not fit ends as kFailed with kCorrupt, and its final
/// checkpoint hands that resume state back unchanged (a chain that cannot start
/// without one sends next_step 0 and an empty theta).
Result<RunOutcome> run_chains(const SamplerSettings& settings, const ChainSettings& chains,
                              std::int64_t parameters, const PotentialFactory& factory,
                              const InitFn& init, const ChainHooks& hooks,
                              const RunControl& control = {},
                              const std::vector<ChainCheckpoint>& resume = {});

/// "completed", "diverged", "stopped", "failed".
std::string_view chain_end_name(ChainEnd end);

}  // namespace credence
