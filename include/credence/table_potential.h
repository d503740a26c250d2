// The posterior potential over a table's training rows, as the samplers see it.
//
// TablePotential joins the data module's minibatches to the posterior's Potential and
// implements the samplers' PotentialFn contract (samplers_potential.h): each
// minibatch() call draws the next seeded batch of training rows and returns U~ and its
// gradient; full() evaluates U over every training row for hmc and rhmc. One object
// belongs to one chain (its batch order and workspaces are per chain); the training
// rows it reads are shared, read-only, between chains. Its resumable state is its
// minibatch position: save_state() writes words["batch_position"] = {epoch, cursor}
// (BatchPosition, data.h) and restore_state() seeks back there, so a resumed chain
// draws the very batches it would have drawn.
//
// When the prior learns its scale (PriorSpec::learn_scale, docs/methods.md section 15) and the
// settings allow it, before_step() redraws the block precisions every K steps (K = the
// spec's passes over the training rows), and the state also holds "prior_rng" and
// "prior_precision"; hyperparameters() are the current precisions. For optimizers
// (PotentialSettings::evidence_prior_scale) before_step() instead moves the precisions
// towards the evidence maximum (posterior/precision_evidence.h); the state then holds
// "prior_precision" only.
//
//   TrainingRows rows = gather_training_rows(data.x, data.labels, data.split.train);
//   auto factory = [&](int chain) {
//     return TablePotential::create(rows, layout, prior, {.temperature = 1},
//                                   {.batch_rows = 128}, seed_of_chain(chain)).value();
//   };
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <memory>
#include <optional>
#include <span>
#include <vector>

#include "credence/data.h"
#include "credence/net.h"
#include "credence/posterior.h"
#include "credence/samplers_potential.h"

namespace credence {

/// The training rows as one contiguous block, so that full-data passes and
/// minibatch gathers read only what they need.
struct TrainingRows {
  Eigen::MatrixXf x;                  // (D, N) training rows only
  std::vector<std::int32_t> labels;   // (N)
};

/// Copies the columns `rows` of x (D, all rows) and their labels.
/// REQUIRES: every row < x.cols() and labels.size() == x.cols().
TrainingRows gather_training_rows(const Eigen::MatrixXf& x, std::span<const std::int32_t> labels,
                                  std::span<const std::int64_t> rows);

/// U~ over seeded minibatches of the training rows; see the file comment.
class PrecisionGibbs;
class PrecisionEvidence;

class TablePotential final : public PotentialFn {
 public:
  ~TablePotential() override;
  /// `rows` must outlive the object. `settings.num_train_rows` and
  /// `settings.max_batch_rows` are filled in here (N = rows.x.cols(), and the batch
  /// size capped at N). Fails with kInvalidInput on bad settings or an empty table.
  static Result<std::unique_ptr<TablePotential>> create(const TrainingRows& rows,
                                                        const ParamLayout& layout,
                                                        const PriorSpec& prior,
                                                        PotentialSettings settings,
                                                        BatchOptions batches,
                                                        std::uint64_t seed);

  std::int64_t rows() const override { return rows_.x.cols(); }
  Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) override;
  Status full(ConstThetaRef theta, ThetaRef grad, double& potential) override;
  /// 1 with likelihood-only tempering (the likelihood already carries the 1/T:
  /// Potential::noise_temperature()); nullopt with whole-posterior tempering, whose U
  /// is untempered, so the sampler's own T applies.
  std::optional<double> noise_temperature() const override {
    if (potential_.settings().tempering == Tempering::kWholePosterior) return std::nullopt;
    return potential_.noise_temperature();
  }

  /// Gibbs (samplers) or evidence (optimizers) update of the learned prior precisions
  /// when one is due (see the file comment).
  Status before_step(ConstThetaRef theta, std::int64_t step, bool& changed) override;
  /// Each coordinate's current prior precision (its block's lambda_b); always true.
  bool prior_precision(ThetaRef precision) const override;
  /// The block precisions when the prior learns its scale; empty otherwise.
  std::span<const double> hyperparameters() const override;
  /// Steps between Gibbs updates; 0 when the precisions stay fixed or follow the evidence.
  std::int64_t prior_update_every() const;

  /// Adds words["batch_position"] = {epoch, cursor} of the next minibatch.
  void save_state(NamedArrays& out) const override;
  /// Seeks to the saved batch position. kCorrupt when "batch_position" is missing,
  /// not two words, or outside this table (then the position is unchanged).
  Status restore_state(const NamedArrays& in) override;

  /// Where the next minibatch comes from.
  BatchPosition batch_position() const { return batches_.position(); }

  /// The potential itself (the last evaluation's NLL, accuracy, log-likelihoods).
  const Potential<float>& potential() const { return potential_; }

 private:
  TablePotential(const TrainingRows& rows, Potential<float> potential, BatchOptions batches,
                 std::uint64_t seed);

  const TrainingRows& rows_;
  Potential<float> potential_;
  std::vector<std::int64_t> all_rows_;   // 0..N-1, the iterator's subset
  BatchIterator batches_;
  std::unique_ptr<PrecisionGibbs> gibbs_;  // null: the prior's precisions stay fixed
  std::unique_ptr<PrecisionEvidence> evidence_;  // optimizers' evidence updates, or null
  Eigen::MatrixXf x_batch_;              // (D, B)
  std::vector<std::int32_t> labels_batch_;  // (B)
};

}  // namespace credence
