// Kernel Stein discrepancy of a run's kept samples against the distribution they target
// (docs/methods.md section 11): the full-data score grad log pi(theta) at each draw,
// then the IMQ discrepancy of stein.h per chain and over all chains together.
//
// The target is what the run's chains sample: the posterior over all training rows at the
// run's temperature and tempering. With a fixed Gaussian prior the score is -grad U / T
// (whole-posterior tempering) or the likelihood-tempered form; with a learned prior scale
// (docs/methods.md section 15) the kept draws are theta without the precisions, so each
// block's prior term is the score of its marginal prior (a multivariate t).
//
// Cost: one full-data gradient per draw, O(N P) each, and O(n^2 P) kernel terms for n
// draws; memory O(n P + N D). Both are capped (SteinSettings). Pure on its arguments:
// safe from several threads on different RunReaders.
//
//   auto reader = credence::RunReader::open("run.h5");
//   credence::Result<credence::RunStein> ksd = credence::run_stein_discrepancy(**reader, {});
//   if (ksd.ok() && ksd->computed) use(ksd->pooled.ksd); else show(ksd->note);
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "credence/ensemble.h"
#include "credence/net.h"
#include "credence/posterior.h"
#include "credence/status.h"
#include "credence/stein.h"

namespace credence {

/// log pi(theta) up to a constant and its gradient, the score, over every training row.
/// One object per thread (it owns a workspace).
class PosteriorScore {
 public:
  /// x: (D, N) encoded training rows, labels (N). `prior` as the run's net text gives it
  /// (fixed or learned scale). invalid_input when T <= 0 (the target is a point), or on
  /// bad shapes or a bad prior.
  static Result<PosteriorScore> create(const ParamLayout& layout, const PriorSpec& prior,
                                       double temperature, Tempering tempering, Eigen::MatrixXd x,
                                       std::vector<std::int32_t> labels);
  PosteriorScore(PosteriorScore&&) noexcept;
  PosteriorScore& operator=(PosteriorScore&&) noexcept;
  ~PosteriorScore();

  /// log pi(theta) + const (the constant does not depend on theta).
  /// REQUIRES: theta.size() == P.
  Result<double> log_density(const Eigen::VectorXd& theta);
  /// grad log pi(theta) into `score` (resized to P).  REQUIRES: theta.size() == P.
  Status score(const Eigen::VectorXd& theta, Eigen::VectorXd& score);

  /// True when the prior learns its scale (the score uses the marginal prior).
  bool learned_prior() const;

 private:
  struct Impl;
  explicit PosteriorScore(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

/// How much of a run the discrepancy may cost.
struct SteinSettings {
  /// Kept samples used per chain: past this many, evenly spaced ones (positions
  /// floor(i k / n) of the k kept). Default 500. 0 skips the discrepancy.
  std::int64_t max_draws_per_chain = 500;
  /// Skip (with a note) when n x P x (N + n) exceeds this, n the draws used over all
  /// chains, P the parameters, N the training rows: the full-data gradients cost about
  /// 6 N P flops per draw and the pooled kernel sum about 4 n^2 P. Default 2e10: about
  /// 20 s on one core (measured 8.1e9 in 7.3 s, docs/diagnostics.md).
  double max_work = 2e10;
  /// The table the run was trained on; empty: the path the run file records. Its SHA-256
  /// must match the run's.
  std::string data_path;
  SteinKernel kernel;  // IMQ constants; default c = 1, beta = -1/2
};

/// The discrepancy of one chain's draws.
struct ChainStein {
  int chain = 0;
  std::int64_t kept = 0;  // committed kept samples of the chain
  SteinDiscrepancy ksd;   // over the draws used (ksd.draws of them)
};

/// What run_stein_discrepancy found; `computed` false with a note when it was skipped.
struct RunStein {
  bool computed = false;
  std::string note;                      // why skipped, or empty
  std::string target;                    // which score was used, in words
  std::vector<ChainStein> chains;        // per chain with kept samples
  SteinDiscrepancy pooled;               // every chain's draws used, together
  std::int64_t train_rows = 0;           // N
  std::int64_t parameters = 0;           // P
  std::int64_t max_draws_per_chain = 0;  // the cap applied
  SteinKernel kernel;                    // the IMQ constants used
  double work = 0;                       // n x P x (N + n), the quantity capped
  double seconds = 0;                    // wall time of the computation
};

/// The score of the distribution `run`'s chains target, over the training rows of the table
/// at `data_path` (the run's own table: its SHA-256 must match, else kInvalidInput).
/// Errors also as PosteriorScore::create (an optimizer's run at T = 0 has no score).
Result<PosteriorScore> posterior_score_of_run(const RunReader& run, const std::string& data_path);

/// KSD of `run`'s kept samples, per chain and pooled. A run that cannot be scored gets
/// computed = false and a note, not an error: an optimizer's single point, temperature 0,
/// no kept samples, too much work, or (with settings.data_path empty) a recorded data file
/// that is missing or changed. Errors: kInvalidInput when settings.data_path is given and
/// is not the run's table, kCorrupt for unreadable samples.
Result<RunStein> run_stein_discrepancy(const RunReader& run, const SteinSettings& settings);

/// The same for the run file at `run_path` (opened read-only, errors as RunReader::open):
/// the one call `compare` or `report` needs for a run it has written or been given, e.g.
///   Result<RunStein> ksd = run_stein_discrepancy(run_path, {.data_path = data_path});
Result<RunStein> run_stein_discrepancy(const std::string& run_path, const SteinSettings& settings);

/// The kept positions used from k kept samples under a cap of n (0 .. k-1 when k <= n).
std::vector<std::int64_t> evenly_spaced_draws(std::int64_t kept, std::int64_t cap);

}  // namespace credence
