// TablePotential: minibatches of training rows feeding the posterior potential.
#include "credence/table_potential.h"

#include "posterior/precision_evidence.h"
#include "posterior/precision_gibbs.h"
#include "util/rng.h"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <string>

namespace credence {
namespace {

std::vector<std::int64_t> iota_rows(Eigen::Index n) {
  std::vector<std::int64_t> rows(static_cast<std::size_t>(n));
  std::iota(rows.begin(), rows.end(), std::int64_t{0});
  return rows;
}

}  // namespace

TrainingRows gather_training_rows(const Eigen::MatrixXf& x, std::span<const std::int32_t> labels,
                                  std::span<const std::int64_t> rows) {
  TrainingRows out;
  out.x.resize(x.rows(), static_cast<Eigen::Index>(rows.size()));
  out.labels.resize(rows.size());
  for (std::size_t i = 0; i < rows.size(); ++i) {
    assert(rows[i] >= 0 && rows[i] < x.cols());
    out.x.col(static_cast<Eigen::Index>(i)) = x.col(static_cast<Eigen::Index>(rows[i]));
    out.labels[i] = labels[static_cast<std::size_t>(rows[i])];
  }
  return out;
}

Result<std::unique_ptr<TablePotential>> TablePotential::create(const TrainingRows& rows,
                                                               const ParamLayout& layout,
                                                               const PriorSpec& prior,
                                                               PotentialSettings settings,
                                                               BatchOptions batches,
                                                               std::uint64_t seed) {
  const std::int64_t n = rows.x.cols();
  if (n < 1) return Status::invalid_input("there are no training rows to fit");
  if (batches.batch_rows < 1) {
    return Status::invalid_input("--batch " + std::to_string(batches.batch_rows) +
                                 " must be at least 1");
  }
  // A batch larger than the table is the full table: clamp rather than refuse.
  batches.batch_rows = std::min(batches.batch_rows, n);
  settings.num_train_rows = n;
  settings.max_batch_rows = batches.batch_rows;
  Result<Potential<float>> potential = Potential<float>::create(layout, prior, settings);
  if (!potential.ok()) return potential.status();
  auto made = std::unique_ptr<TablePotential>(
      new TablePotential(rows, std::move(*potential), batches, seed));
  const bool learn = prior.learn_scale && settings.learn_prior_scale &&
                     (settings.temperature > 0 || settings.tempering == Tempering::kLikelihoodOnly);
  if (learn) {
    const std::int64_t per_pass =
        settings.full_batch_steps ? 1 : (n + batches.batch_rows - 1) / batches.batch_rows;
    const auto every = static_cast<std::int64_t>(
        std::llround(prior.gibbs_passes * static_cast<double>(per_pass)));
    // The Gibbs draws have a stream of their own (util/rng.h's kGibbs purpose), derived
    // from this chain's batch seed, itself a per-chain stream of the run seed.
    made->gibbs_ = std::make_unique<PrecisionGibbs>(
        prior, made->potential_.prior(), std::max<std::int64_t>(1, every),
        settings.temperature, settings.tempering, stream_seed(seed, SeedPurpose::kGibbs, 0));
  }
  if (prior.learn_scale && !learn && settings.evidence_prior_scale) {
    const std::int64_t per_pass =
        settings.full_batch_steps ? 1 : (n + batches.batch_rows - 1) / batches.batch_rows;
    // Capped at the fixed start (posterior/precision_evidence.h says why).
    made->evidence_ = std::make_unique<PrecisionEvidence>(
        layout, made->potential_.prior().block_precisions(), n, per_pass, seed);
    // Start loose (PrecisionEvidence::kStartScale): from the fixed start the warm-up
    // flattens a network on a small table into the collapsed fixed point (weights near
    // zero, gamma near zero) that the evidence never leaves (measured: digits100 adam
    // 2.153 either way); the updates then move each block, at most to the fixed value.
    std::vector<double> loose(made->potential_.prior().block_precisions().begin(),
                              made->potential_.prior().block_precisions().end());
    for (double& l : loose) l /= PrecisionEvidence::kStartScale * PrecisionEvidence::kStartScale;
    (void)made->potential_.set_block_precisions(loose);
  }
  return made;
}

TablePotential::~TablePotential() = default;

Status TablePotential::before_step(ConstThetaRef theta, std::int64_t step, bool& changed) {
  changed = gibbs_ && gibbs_->due(step);
  if (changed) gibbs_->draw<float>(theta, potential_);
  if (evidence_ && evidence_->due(step)) {
    changed = true;
    return evidence_->update(theta, rows_.x, step, potential_);
  }
  return Status::ok_status();
}

std::span<const double> TablePotential::hyperparameters() const {
  if (!gibbs_ && !evidence_) return {};
  return potential_.prior().block_precisions();
}

bool TablePotential::prior_precision(ThetaRef precision) const {
  const GaussianPrior& prior = potential_.prior();
  const std::span<const double> lambda = prior.block_precisions();
  for (Index b = 0; b < prior.num_blocks(); ++b) {
    precision.segment(prior.block_offset(b), prior.block_size(b))
        .setConstant(static_cast<float>(lambda[static_cast<std::size_t>(b)]));
  }
  return true;
}

std::int64_t TablePotential::prior_update_every() const { return gibbs_ ? gibbs_->every() : 0; }

TablePotential::TablePotential(const TrainingRows& rows, Potential<float> potential,
                               BatchOptions batches, std::uint64_t seed)
    : rows_(rows),
      potential_(std::move(potential)),
      all_rows_(iota_rows(rows.x.cols())),
      batches_(rows.x, rows.labels, all_rows_, batches, seed),
      x_batch_(rows.x.rows(), batches.batch_rows),
      labels_batch_(static_cast<std::size_t>(batches.batch_rows)) {}

Status TablePotential::minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) {
  const BatchInfo info = batches_.next(x_batch_, labels_batch_);
  Result<double> u = potential_.evaluate(
      theta, x_batch_.leftCols(info.rows),
      std::span<const std::int32_t>(labels_batch_.data(), static_cast<std::size_t>(info.rows)),
      grad);
  if (!u.ok()) return u.status();
  out.potential = *u;
  out.accuracy = potential_.last_accuracy();
  return Status::ok_status();
}

Status TablePotential::full(ConstThetaRef theta, ThetaRef grad, double& potential) {
  Result<double> u = potential_.evaluate_full(theta, rows_.x, rows_.labels, grad);
  if (!u.ok()) return u.status();
  potential = *u;
  return Status::ok_status();
}

// Words hold the position so the run file can store it losslessly beside the RNG words.
void TablePotential::save_state(NamedArrays& out) const {
  const BatchPosition at = batches_.position();
  out.words["batch_position"] = {static_cast<std::uint64_t>(at.epoch),
                                 static_cast<std::uint64_t>(at.cursor)};
  if (gibbs_) gibbs_->save_state(potential_.prior(), out);
  if (evidence_) PrecisionEvidence::save_state(potential_.prior(), out);
}

Status TablePotential::restore_state(const NamedArrays& in) {
  auto it = in.words.find("batch_position");
  if (it == in.words.end() || it->second.size() != 2) {
    return Status::corrupt(
        "the model state lacks 'batch_position' (two words: epoch, cursor); the "
        "checkpoint is damaged or was written by a model without minibatches");
  }
  // Values past int64's range wrap negative and are refused by seek().
  const BatchPosition at{static_cast<std::int64_t>(it->second[0]),
                         static_cast<std::int64_t>(it->second[1])};
  if (gibbs_) {
    CREDENCE_RETURN_IF_ERROR(
        gibbs_->restore_state(in, potential_).with_context("restoring the prior's precisions"));
  }
  if (evidence_) {
    CREDENCE_RETURN_IF_ERROR(PrecisionEvidence::restore_state(in, potential_)
                                 .with_context("restoring the prior's precisions"));
  }
  return batches_.seek(at).with_context("restoring the minibatch position");
}

}  // namespace credence
