// The sampler-model contract: what a sampler needs from the model it samples.
//
// Samplers see one flat float vector theta (P coordinates) and a PotentialFn that
// returns the potential U (docs/methods.md section 1: negative log prior minus the
// log-likelihood at full-data scale, so a minibatch term carries the factor N/b)
// and its gradient. They know nothing of networks or data. Each chain gets its own
// PotentialFn (run_chains asks a factory for one per chain), because minibatch
// order and workspaces are per-chain state; a PotentialFn is called from one
// thread at a time and need not be thread-safe.
//
// A PotentialFn may carry state that a resumed chain must get back, such as its
// position in the minibatch order. save_state() adds it as named arrays (the chain
// driver stores them under "model.<name>" in its checkpoints) and restore_state()
// takes the same arrays back; both default to doing nothing, for stateless models
// such as the example.
//
// A complete tiny example, U(theta) = sum_i theta_i^2 / (2 s^2), a posterior
// N(0, s^2 I) seen as "N = 1 data row":
//
//   class Quadratic : public credence::PotentialFn {
//    public:
//     explicit Quadratic(float s) : precision_(1.0f / (s * s)) {}
//     std::int64_t rows() const override { return 1; }
//     credence::Status minibatch(credence::ConstThetaRef theta, credence::ThetaRef grad,
//                                credence::MinibatchValue& out) override {
//       grad = precision_ * theta;                          // overwrite, never +=
//       out.potential = 0.5 * precision_ * theta.squaredNorm();
//       return credence::Status::ok_status();
//     }
//     credence::Status full(credence::ConstThetaRef theta, credence::ThetaRef grad,
//                           double& potential) override {
//       credence::MinibatchValue value;
//       CREDENCE_RETURN_IF_ERROR(minibatch(theta, grad, value));
//       potential = value.potential;
//       return credence::Status::ok_status();
//     }
//    private:
//     float precision_;
//   };
//
//   auto factory = [](int /*chain*/) { return std::make_unique<Quadratic>(2.0f); };
//
// A model that draws minibatches saves where it stands, e.g. (TablePotential does this):
//
//   void save_state(credence::NamedArrays& out) const override {
//     const credence::BatchPosition at = batches_.position();
//     out.words["batch_position"] = {static_cast<std::uint64_t>(at.epoch),
//                                    static_cast<std::uint64_t>(at.cursor)};
//   }
//   credence::Status restore_state(const credence::NamedArrays& in) override {
//     auto it = in.words.find("batch_position");
//     if (it == in.words.end() || it->second.size() != 2)
//       return credence::Status::corrupt("model state lacks 'batch_position'");
//     return batches_.seek({static_cast<std::int64_t>(it->second[0]),
//                           static_cast<std::int64_t>(it->second[1])});
//   }
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <span>

#include "credence/named_arrays.h"
#include "credence/status.h"

namespace credence {

/// A writable view of a flat parameter-sized float vector. // (P)
using ThetaRef = Eigen::Ref<Eigen::VectorXf>;
/// A read-only view of a flat parameter-sized float vector. // (P)
using ConstThetaRef = Eigen::Ref<const Eigen::VectorXf>;

/// What a minibatch evaluation reports besides the gradient.
struct MinibatchValue {
  /// U~(theta): prior once plus (N/b) times the batch negative log-likelihood.
  double potential = 0.0;
  /// Fraction of the batch classified correctly, when the model knows it; traced only.
  std::optional<double> accuracy;
};

/// The model side of every sampler. Implement rows() and minibatch(); full() is
/// needed by hmc and rhmc only, gradient_noise_variance() by sghmc and rsghmc
/// only when their gradient-noise correction is switched on; psgld uses
/// prior_precision() when it is given (a model with a Gaussian prior should give it).
class PotentialFn {
 public:
  virtual ~PotentialFn() = default;

  /// N, the number of data rows behind U (converts mean-loss learning rates).
  /// REQUIRES: >= 1.
  virtual std::int64_t rows() const = 0;

  /// Draws the next minibatch, writes U~(theta) into `out` and its gradient into
  /// `grad` (overwritten). Returns a failed Status for an error in the model
  /// (the chain then stops with that status); non-finite values are not errors
  /// here, the sampler checks them. Must not allocate if the chain is to stay
  /// allocation-free.  theta: (P), grad: (P).
  virtual Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) = 0;

  /// Full-data U(theta) and its gradient (overwritten), for the exact samplers
  /// hmc and rhmc. The default fails with kInvalidInput.  theta: (P), grad: (P).
  virtual Status full(ConstThetaRef theta, ThetaRef grad, double& potential);

  /// Per-coordinate variance of the last minibatch gradient, Vhat_i in gradient
  /// units (docs/methods.md section 4: N (N - b) / b * s_i^2), written into `vhat`.
  /// Returns false when the model does not estimate it (the default).  vhat: (P).
  virtual bool gradient_noise_variance(ThetaRef vhat);

  /// The temperature the sampler's injected noise (and hmc's Metropolis test) must use,
  /// when the potential fixes it; nullopt (the default) leaves the sampler's own T.
  /// A potential that already divides its likelihood by T (likelihood-only tempering,
  /// docs/methods.md section 1, Form B) returns 1: were the noise also at T, the chain would
  /// target p(theta)^(1/T) p(D|theta)^(1/T^2). run_chains() builds each chain's sampler
  /// with this temperature; code that calls Sampler::create itself must do the same.
  virtual std::optional<double> noise_temperature() const;
  /// Called by the chain driver before every step with the current theta: a model whose
  /// target moves between steps (the Gibbs updates of a prior that learns its scale,
  /// docs/methods.md section 15) updates it here, never inside a step, so hmc and rhmc keep a
  /// fixed target within a trajectory. Sets `changed` when the target changed (samplers
  /// then drop cached potentials). The default does nothing. Must not allocate.
  virtual Status before_step(ConstThetaRef theta, std::int64_t step, bool& changed);

  /// The precision of the Gaussian prior on every coordinate, c_i with the prior's part
  /// of U equal to sum_i c_i theta_i^2 / 2 (so its gradient is c_i theta_i), written into
  /// `precision` at the current hyperparameters. psgld adapts its preconditioner from
  /// the gradient without this term (docs/methods.md section 3). Returns false (the
  /// default) when the model does not split its prior out. Must not allocate.
  /// precision: (P).
  virtual bool prior_precision(ThetaRef precision) const;

  /// The model's current hyperparameters (a learned prior's block precisions), recorded
  /// with every kept sample; empty by default.
  virtual std::span<const double> hyperparameters() const;

  /// Adds the model's resumable state to `out` as named arrays (names without a
  /// prefix; the chain driver adds "model."). The default adds nothing. May allocate;
  /// called only when a checkpoint is taken.
  virtual void save_state(NamedArrays& out) const;

  /// Takes back what save_state() wrote, so the next minibatch() call continues as if
  /// the chain had never stopped. Fails with kCorrupt when an array is missing or
  /// malformed. The default ignores `in` and succeeds.
  virtual Status restore_state(const NamedArrays& in);
};

/// Makes the PotentialFn of chain `chain` (0-based). Called once per chain, from the
/// thread that runs it, possibly concurrently for different chains.
using PotentialFactory = std::function<std::unique_ptr<PotentialFn>(int chain)>;

}  // namespace credence
