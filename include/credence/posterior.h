// The posterior module: the prior and the potential U that samplers and optimizers move on.
//
// GaussianPrior turns the prior scales of a net file into one standard deviation per
// layer block (weights, biases) and gives -log p(theta) and its gradient. Potential<S>
// combines it with a Network into the minibatch potential of docs/methods.md section 1,
//   U~(theta) = -log p(theta) - (N/b) sum_{n in batch} log p(y_n | x_n, theta),
// its gradient (the prior enters once, unscaled by N/b), and the full-data U for
// full-batch HMC. The samplers see only a flat vector and this value-and-gradient call.
// A GaussianPrior's block precisions change only through set_block_precisions (the Gibbs
// updates of a learned scale, docs/methods.md section 15); a Potential owns its prior and a
// workspace and is used by one thread (one per chain). Nothing here depends on the data module: batches arrive as
// Eigen views of a (D, b) matrix and a span of int32 labels.
//
//   Result<Potential<float>> u = Potential<float>::create(layout, spec.prior, settings);
//   Result<double> value = u->evaluate(theta, x_batch, labels, grad);  // fills grad
//   if (!value.ok()) return value.status();
#pragma once

#include <cstdint>
#include <span>
#include <string_view>
#include <vector>

#include "credence/net.h"
#include "credence/status.h"

namespace credence {

/// Which posterior the temperature T tempers (docs/methods.md section 1).
enum class Tempering {
  /// pi_T(theta) ∝ exp(-U(theta)/T): prior and likelihood together. U and its gradient
  /// are unscaled; samplers multiply their injected noise variance by T. The default.
  kWholePosterior,
  /// -log p(theta) - (1/T) sum log p(y|x,theta): only the likelihood is tempered. The
  /// potential carries the 1/T and the samplers' noise temperature is 1. REQUIRES T > 0.
  kLikelihoodOnly,
};

/// "posterior" or "likelihood" (the spelling recorded in run files).
std::string_view tempering_name(Tempering tempering);
/// The Tempering spelled `name`; invalid_input otherwise.
Result<Tempering> parse_tempering(std::string_view name);

/// Prior standard deviations of one layer.
struct LayerPriorSigma {
  double weight_sigma = 1.0;  // of every entry of W_l
  double bias_sigma = 1.0;    // of every entry of b_l
};

/// Independent Gaussian prior, one precision lambda = 1/sigma^2 per block:
///   -log p(theta) = sum_blocks [ lambda ||theta_block||^2 / 2 + (d/2) log(2 pi / lambda) ]
///   grad          = lambda theta
/// Blocks: 2 per layer, block 2l the weights of layer l and block 2l+1 its biases. The
/// precisions start at the spec's fixed values (1/sigma^2 below); a learned scale
/// (PriorSpec::learn_scale) replaces them between steps through set_block_precisions.
/// Weight sigma of layer l: scale_l / sqrt(fan_in_l) with fan-in scaling, else scale_l,
/// where scale_l is the layer's override or the global scale; bias sigma: the layer's
/// bias override or the global bias scale.
class GaussianPrior {
 public:
  /// Resolves `spec` for `layout`. invalid_input if the spec is invalid (see
  /// validate_net_spec) or names a layer the layout does not have.
  static Result<GaussianPrior> create(const PriorSpec& spec, const ParamLayout& layout);

  /// -log p(theta), with the normalising constant, accumulated in double.
  /// REQUIRES: theta.size() == P.
  template <typename S>
  double neg_log_density(ConstVecRef<S> theta) const;

  /// Adds theta / sigma^2 into grad (the gradient of -log p).
  /// REQUIRES: theta.size() == grad.size() == P.
  template <typename S>
  void add_gradient(VecRef<S> grad, ConstVecRef<S> theta) const;

  /// The spec's fixed standard deviations per layer, in layout order (the starting
  /// precisions of a learned scale).
  const std::vector<LayerPriorSigma>& sigmas() const { return sigmas_; }
  /// One standard deviation per coordinate (P) at the current precisions, e.g. to draw
  /// theta from the prior.
  VecX<double> coordinate_sigmas() const;

  /// 2 x layers: block 2l is layer l's weights, 2l+1 its biases.
  Index num_blocks() const { return static_cast<Index>(precisions_.size()); }
  Index block_offset(Index block) const;  // first coordinate in theta
  Index block_size(Index block) const;    // d_b
  /// ||theta_b||^2 accumulated in double.  REQUIRES: theta.size() == P.
  template <typename S>
  double block_squared_norm(ConstVecRef<S> theta, Index block) const;
  /// Current precision of every block (num_blocks()).
  std::span<const double> block_precisions() const { return precisions_; }
  /// Replaces every block's precision. Returns false, changing nothing, unless there
  /// are num_blocks() values, each positive and finite. Allocates nothing.
  bool set_block_precisions(std::span<const double> precisions);

 private:
  GaussianPrior(ParamLayout layout, std::vector<LayerPriorSigma> sigmas);
  void update_log_normaliser();
  ParamLayout layout_;
  std::vector<LayerPriorSigma> sigmas_;
  std::vector<double> precisions_;  // (num_blocks) lambda_b
  double log_normaliser_ = 0;  // sum over blocks of (d/2) log(2 pi / lambda_b)
};

/// -log N(theta; 0, sigma^2 I) = ||theta||^2/(2 sigma^2) + (d/2) log(2 pi sigma^2) for one
/// block (docs/methods.md section 1, test value: theta = (1, -2), sigma = 2 gives 3.849171...).
double gaussian_neg_log_density(ConstVecRef<double> theta, double sigma);

/// How the potential scales and tempers; plain values, checked by Potential::create.
struct PotentialSettings {
  Index num_train_rows = 0;  // N, rows of the training set; >= 1 (no default)
  Index max_batch_rows = 0;  // b_max, workspace columns: the largest batch; >= 1
  double temperature = 1.0;  // T >= 0; 1 is the Bayes posterior, 0 the optimizer limit
  Tempering tempering = Tempering::kWholePosterior;  // what T tempers; default both
  // Gibbs updates of the block precisions when the prior spec learns its scale
  // (docs/methods.md section 15). Off for optimizers, which cannot use the draw (the
  // T -> 0 limit of the draw drives lambda to infinity); also off at T = 0. Default on.
  bool learn_prior_scale = true;
  // Evidence updates of the block precisions instead (optimizers; docs/methods.md section 15,
  // posterior/precision_evidence.h) when the prior spec learns its scale and
  // learn_prior_scale is off. Default off.
  bool evidence_prior_scale = false;
  // One step reads every training row (hmc, rhmc: a step is one trajectory), so a pass
  // is one step; otherwise a pass is ceil(N / batch) steps. Default off.
  bool full_batch_steps = false;
};

/// Value and gradient of the potential on minibatches and on the full data.
/// After each evaluation the accessors describe it (rows, mean NLL, accuracy, ...).
template <typename S>
class Potential {
 public:
  /// Builds the network of `layout`, the prior of `prior`, and a workspace for
  /// settings.max_batch_rows rows. invalid_input on bad settings (N or b_max < 1,
  /// T < 0 or not finite, T = 0 with likelihood tempering) or a bad prior.
  static Result<Potential> create(const ParamLayout& layout, const PriorSpec& prior,
                                  const PotentialSettings& settings);

  /// U~(theta) on one minibatch of b = labels.size() rows, and its gradient into grad
  /// (overwritten, length P). The likelihood is scaled by N/b (times 1/T with
  /// likelihood tempering); the prior enters once. x_batch: (D, b).
  /// Fails (invalid_input) on a shape mismatch, b > max_batch_rows, or a label outside
  /// [0, K); grad is then unspecified. Allocates nothing.
  Result<double> evaluate(ConstVecRef<S> theta, ConstMatRef<S> x_batch,
                          std::span<const std::int32_t> labels, VecRef<S> grad);

  /// The exact U(theta) over all N rows (x: (D, N), N == num_train_rows) and its
  /// gradient into grad, evaluated in workspace-sized chunks (for full-batch HMC).
  Result<double> evaluate_full(ConstVecRef<S> theta, ConstMatRef<S> x,
                               std::span<const std::int32_t> labels, VecRef<S> grad);
  /// The exact U(theta) over all N rows without a gradient (for Metropolis tests).
  Result<double> value_full(ConstVecRef<S> theta, ConstMatRef<S> x,
                            std::span<const std::int32_t> labels);

  /// The variance multiplier samplers apply to their injected noise: T with
  /// kWholePosterior, 1 with kLikelihoodOnly (the potential already holds the 1/T).
  double noise_temperature() const;
  /// The factor on the summed minibatch NLL for a batch of b rows: (N/b), over T with
  /// likelihood tempering.
  double likelihood_scale(Index batch_rows) const;

  // About the last evaluation (minibatch or full).
  Index last_rows() const { return last_rows_; }              // rows it covered
  double last_neg_log_prior() const { return last_neg_log_prior_; }  // -log p(theta)
  double last_mean_nll() const { return last_mean_nll_; }    // mean -log p(y|x) over rows
  double last_accuracy() const { return last_accuracy_; }    // share of rows argmax == y
  /// Per-example log p(y_n | x_n) of the last evaluate() (b); empty after the full-data
  /// calls. Valid until the next call on this Potential.
  ConstVecRef<S> last_log_likelihoods() const { return log_lik_.head(log_lik_rows_); }

  const Network<S>& network() const { return network_; }
  const GaussianPrior& prior() const { return prior_; }
  /// For the Gibbs updates of a learned scale: see GaussianPrior::set_block_precisions.
  bool set_block_precisions(std::span<const double> precisions) {
    return prior_.set_block_precisions(precisions);
  }
  const PotentialSettings& settings() const { return settings_; }

 private:
  Potential(Network<S> network, GaussianPrior prior, const PotentialSettings& settings);
  // Forward (and backward when grad is non-null) over one chunk; returns sum log p(y|x)
  // and counts correct predictions into correct.
  Result<double> chunk(ConstVecRef<S> theta, ConstMatRef<S> x,
                       std::span<const std::int32_t> labels, VecRef<S>* grad, S scale,
                       Index& correct);
  Result<double> full(ConstVecRef<S> theta, ConstMatRef<S> x,
                      std::span<const std::int32_t> labels, VecRef<S>* grad);

  Network<S> network_;
  GaussianPrior prior_;
  PotentialSettings settings_;
  Workspace<S> workspace_;
  VecX<S> log_lik_;  // (b_max)
  Index log_lik_rows_ = 0;
  Index last_rows_ = 0;
  double last_neg_log_prior_ = 0;
  double last_mean_nll_ = 0;
  double last_accuracy_ = 0;
};

extern template class Potential<float>;
extern template class Potential<double>;

}  // namespace credence
