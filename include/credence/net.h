// The net module: net files, layer shapes, the flat parameter vector, forward and backward.
//
// A NetSpec says what the network looks like (hidden layers, activations, prior scales)
// without knowing the data; resolve_layout(spec, D, K) turns it into concrete shapes and
// the offsets of every layer inside one flat parameter vector (ParamLayout). Network<S>
// runs the forward pass and backprop over a minibatch into a Workspace<S> that is sized
// once for the largest batch. The engine runs in float; double is instantiated too so
// that gradient checks run in double. Network is immutable after construction and safe
// to share between threads; a Workspace belongs to one thread (one per chain).
//
// Storage conventions (every kernel and every view follows them):
// - Eigen column-major throughout.
// - Activations are (width, B): one data row is one contiguous column. The input batch
//   is (D, B); the logits and log-probabilities are (K, B).
// - Weights are (out, in), so a layer is one GEMM: y = W x + b. Biases are (out).
// - Flat parameter layout: for each layer in order (hidden layers first, output last,
//   then the linear path when the spec has one: W (K x D), b (K), added to the logits),
//   the weights W (out x in) in column-major order, then the bias b (out). So layer l
//   starts at weight_offset; W(i, j) is theta[weight_offset + i + j * out]; the bias
//   follows at bias_offset = weight_offset + out * in. With numpy:
//     W = theta[w_off : w_off + out*in].reshape((out, in), order="F")
//     b = theta[b_off : b_off + out]
//   nets/README.md repeats this for Python users.
// - Gradients: parameter gradients accumulate (+=) and input gradients are overwritten
//   (=). The caller (the Potential) zeroes the gradient vector once per evaluation.
// - Nothing in forward/backward allocates; a batch wider than the workspace is an error.
#pragma once

#include <Eigen/Core>
#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "credence/status.h"

namespace credence {

using Index = Eigen::Index;

template <typename S>
using MatX = Eigen::Matrix<S, Eigen::Dynamic, Eigen::Dynamic>;
template <typename S>
using VecX = Eigen::Matrix<S, Eigen::Dynamic, 1>;
/// Writable and read-only views of a matrix or vector (no copy when the argument is a
/// Matrix, Map or column block; a mismatching expression would be copied, so pass those).
template <typename S>
using MatRef = Eigen::Ref<MatX<S>>;
template <typename S>
using ConstMatRef = Eigen::Ref<const MatX<S>>;
template <typename S>
using VecRef = Eigen::Ref<VecX<S>>;
template <typename S>
using ConstVecRef = Eigen::Ref<const VecX<S>>;

// ---------------------------------------------------------------------------------------
// What the network looks like: NetSpec, read from a net file or built from options.

/// Elementwise nonlinearity applied after a hidden layer's affine map.
enum class Activation { kRelu, kTanh, kSigmoid, kSoftplus, kIdentity };

/// The net-file spelling: "relu", "tanh", "sigmoid", "softplus", "identity".
std::string_view activation_name(Activation activation);
/// The activation spelled `name`; invalid_input naming the accepted spellings otherwise.
Result<Activation> parse_activation(std::string_view name);

/// Distribution family of the prior on the parameters (only Gaussian so far).
enum class PriorFamily { kGaussian };

/// A per-layer change to the prior's scales. Layers count from 0 over the affine maps:
/// 0 .. hidden.size()-1 are the hidden layers, hidden.size() is the output layer.
struct LayerPriorOverride {
  int layer = 0;
  std::optional<double> weight_scale;  // replaces PriorSpec::weight_scale; empty: keep
  std::optional<double> bias_scale;    // replaces PriorSpec::bias_scale; empty: keep
  bool operator==(const LayerPriorOverride&) const = default;
};

/// The prior of docs/methods.md section 1. Weight prior standard deviation of layer l:
/// scale_l / sqrt(fan_in_l) with fan_in_scaling, else scale_l; bias standard deviation:
/// bias_scale_l (never fan-in scaled).
struct PriorSpec {
  PriorFamily family = PriorFamily::kGaussian;
  double weight_scale = 1.0;   // s, global weight scale; > 0. Default 1.
  bool fan_in_scaling = true;  // divide weight scales by sqrt(fan-in). Default on.
  double bias_scale = 1.0;     // global bias standard deviation; > 0. Default 1.
  std::vector<LayerPriorOverride> overrides;  // at most one per layer; empty: none

  // A learned scale ("scale=auto", docs/methods.md section 15): every block (a layer's weights,
  // separately its biases) gets a precision lambda_b with a Gamma(shape a, rate r)
  // hyperprior, started at the fixed value above (fan_in/s^2 for weights, 1/bias_scale^2
  // for biases) and redrawn from its conditional by Gibbs updates in the samplers.
  // Optimizers learn it by evidence updates instead (posterior/precision_evidence.h).
  // Constants and the
  // measurements behind them: docs/prior.md.
  bool learn_scale = false;  // Default off in the library; the CLI and net files default on.
  double hyper_shape = 1.0;  // a > 0. Default 1: a broad hyperprior.
  // r > 0; empty: each block's own r = a / (its fixed precision), so the hyperprior's mean
  // a/r is the fixed-prior precision ("rate=matched"). Default 1 (a = r = 1, as in the
  // ICML 2014 network experiments): measured lower test NLL than rate=matched in 12 of 15
  // sampler runs on 70-124-row training sets and within 0.007 nats on 398 and 1,258 rows;
  // both far below the fixed scale on small tables (docs/prior.md).
  std::optional<double> hyper_rate = 1.0;
  double gibbs_passes = 1.0;  // K in passes over the training rows (>= 1 step); > 0.

  bool operator==(const PriorSpec&) const = default;
};

/// One hidden layer: its width and its activation.
struct HiddenLayerSpec {
  Index width = 0;  // units; >= 1
  Activation activation = Activation::kRelu;
  bool operator==(const HiddenLayerSpec&) const = default;
};

/// The whole network apart from the data-given sizes D and K. Empty `hidden` is
/// multinomial logistic regression.
struct NetSpec {
  std::vector<HiddenLayerSpec> hidden;
  PriorSpec prior;
  // A linear path: logits = (the chain's output layer) + W_lin x + b_lin, with prior blocks
  // of its own (fan-in D), so a learned scale can keep the linear part and shrink the
  // rest where the truth is nearly linear (docs/prior.md, "The linear path", with the
  // measurements that keep it off by default). Ignored without hidden layers (the output
  // layer is then the linear model). Default off.
  bool linear_path = false;
  bool operator==(const NetSpec&) const = default;
};

/// The net-file format version this build reads and writes.
inline constexpr int kNetFormatVersion = 1;
/// Largest width a net file or option may ask for (guards against absurd sizes).
inline constexpr Index kMaxLayerWidth = Index{1} << 20;

/// Checks widths (1..kMaxLayerWidth), prior scales (positive, finite) and overrides (an
/// existing layer, at most one each). invalid_input naming the offending layer otherwise.
Status validate_net_spec(const NetSpec& spec);
/// Parses net-file text (grammar in nets/README.md). `file_name` is only used in
/// messages. Fails with invalid_input "file:line:column: found X, expected Y".
Result<NetSpec> parse_net_text(std::string_view text, std::string_view file_name);
/// Reads and parses a net file; io_error if it cannot be read.
Result<NetSpec> read_net_file(const std::filesystem::path& path);
/// The spec as net-file text that parse_net_text reads back to an equal spec.
std::string format_net_spec(const NetSpec& spec);
/// The spec that command-line options describe: `--hidden 64,64 --activation relu` is
/// net_spec_from_options({64, 64}, "relu"); every hidden layer gets the same activation,
/// and the prior is the default one. An empty list means no hidden layer.
Result<NetSpec> net_spec_from_options(std::span<const Index> hidden_widths,
                                      std::string_view activation, PriorSpec prior = {});

// ---------------------------------------------------------------------------------------
// Concrete shapes: ParamLayout.

/// One affine map and its place in the flat parameter vector.
struct LayerLayout {
  Index in = 0;                               // fan-in (D for the first layer)
  Index out = 0;                              // width (K for the output layer)
  Activation activation = Activation::kIdentity;  // identity for the output layer
  Index weight_offset = 0;  // W (out, in), column-major, starts here in theta
  Index bias_offset = 0;    // b (out) starts here; = weight_offset + out * in
  bool operator==(const LayerLayout&) const = default;
};

/// Every layer's shapes and offsets, in flat-vector order: the chain of hidden layers and
/// the output layer, then the linear path (D -> K, identity) when there is one.
struct ParamLayout {
  Index input_width = 0;  // D
  Index num_classes = 0;  // K
  Index num_params = 0;   // P, the length of theta
  std::vector<LayerLayout> layers;
  bool linear_path = false;  // the last entry of layers is the linear path
  Index max_width() const;  // widest layer output (for workspace sizing)
  /// Layers of the chain x -> hidden -> output (all of them but the linear path).
  std::size_t chain_size() const { return layers.size() - (linear_path ? 1 : 0); }
  bool operator==(const ParamLayout&) const = default;
};

/// Resolves `spec` for D inputs and K classes.
/// Fails (invalid_input) unless the spec is valid, D >= 1, K >= 2 and P <= 2^30.
Result<ParamLayout> resolve_layout(const NetSpec& spec, Index input_width, Index num_classes);

// ---------------------------------------------------------------------------------------
// Network, Workspace and initialisation, templated on the scalar (float and double).

template <typename S>
class Network;

/// Activations and gradients of one batch, allocated once for up to max_batch() rows.
/// Views returned by the accessors stay valid until the next forward() on it.
template <typename S>
class Workspace {
 public:
  /// Allocates buffers for `layout` and batches of up to `max_batch` rows.
  /// REQUIRES: max_batch >= 1.
  Workspace(const ParamLayout& layout, Index max_batch);

  Index max_batch() const { return max_batch_; }
  /// Rows of the last forward pass (0 before the first).
  Index batch() const { return batch_; }
  /// Logits (K, B) of the last forward pass.
  ConstMatRef<S> logits() const { return pre_.back().leftCols(batch_); }
  /// log softmax(logits), (K, B), of the last forward pass.
  ConstMatRef<S> log_probs() const { return log_probs_.leftCols(batch_); }
  /// Pre-activation (out, B) of layer l in the last forward pass.
  ConstMatRef<S> pre_activation(std::size_t l) const { return pre_[l].leftCols(batch_); }

 private:
  friend class Network<S>;
  Index max_batch_ = 0;
  Index batch_ = 0;
  std::vector<MatX<S>> pre_;   // per layer: z = W a + b, (out, max_batch); last: logits
  std::vector<MatX<S>> post_;  // per hidden layer: a = f(z), (out, max_batch)
  std::vector<MatX<S>> d_pre_;  // per layer: gradient with respect to z, (out, max_batch)
  MatX<S> log_probs_;          // (K, max_batch)
};

/// A dense network of a given ParamLayout: forward, softmax cross-entropy and backward.
template <typename S>
class Network {
 public:
  explicit Network(ParamLayout layout) : layout_(std::move(layout)) {}

  const ParamLayout& layout() const { return layout_; }
  Index num_params() const { return layout_.num_params; }

  /// Forward pass: fills ws's activations, logits (K, B) and log-probabilities.
  /// Fails (invalid_input) if x is not (D, B) with 1 <= B <= ws.max_batch(), or theta
  /// is not of length P. x: (D, B).
  Status forward(Workspace<S>& ws, ConstVecRef<S> theta, ConstMatRef<S> x) const;

  /// Per-example log-likelihoods log p(y_i | x_i) = log_probs(y_i, i) of the last forward
  /// into `log_lik` (B), and their sum in double. Fails (invalid_input) on a label
  /// outside [0, K) or a label count other than B.
  Result<double> log_likelihood(VecRef<S> log_lik, const Workspace<S>& ws,
                                std::span<const std::int32_t> labels) const;

  /// Backward of  scale * sum_i -log p(y_i | x_i)  for the last forward (same theta, x,
  /// labels). Adds into d_theta (P).
  /// REQUIRES: forward() on ws with this theta and x succeeded; labels validated by
  /// log_likelihood(); d_theta.size() == P.
  void backward(VecRef<S> d_theta, Workspace<S>& ws, ConstVecRef<S> theta, ConstMatRef<S> x,
                std::span<const std::int32_t> labels, S scale) const;

 private:
  ParamLayout layout_;
};

/// Seeded initialisation: weights of layers followed by relu or softplus from He
/// (normal, variance 2/fan_in; ICCV 2015 "Delving deep into rectifiers"), of the others
/// (tanh, sigmoid, identity and the output layer) from Glorot (uniform on +-sqrt(6/(in+out));
/// AISTATS 2010 "Understanding the difficulty of training deep feedforward neural
/// networks"); biases zero; the linear path zero (the network starts as without it). The
/// same seed gives the same theta on every platform.
/// REQUIRES: theta.size() == layout.num_params.
template <typename S>
void initialize_params(VecRef<S> theta, const ParamLayout& layout, std::uint64_t seed);

extern template class Workspace<float>;
extern template class Workspace<double>;
extern template class Network<float>;
extern template class Network<double>;

}  // namespace credence
