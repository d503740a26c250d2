// Network: forward pass, per-example log-likelihoods and backprop over one minibatch.
#include <cassert>
#include <string>

#include "credence/net.h"
#include "net/activation.h"
#include "net/dense.h"
#include "net/loss.h"

namespace credence {
namespace {

template <typename S>
Eigen::Map<const MatX<S>> weight_view(const S* theta, const LayerLayout& layer) {
  return {theta + layer.weight_offset, layer.out, layer.in};  // (out, in)
}
template <typename S>
Eigen::Map<const VecX<S>> bias_view(const S* theta, const LayerLayout& layer) {
  return {theta + layer.bias_offset, layer.out};  // (out)
}

}  // namespace

template <typename S>
Status Network<S>::forward(Workspace<S>& ws, ConstVecRef<S> theta, ConstMatRef<S> x) const {
  const Index batch = x.cols();
  if (theta.size() != layout_.num_params) {
    return Status::invalid_input("network forward: parameter vector has " +
                                 std::to_string(theta.size()) + " entries, the network " +
                                 std::to_string(layout_.num_params));
  }
  if (x.rows() != layout_.input_width) {
    return Status::invalid_input("network forward: input has " + std::to_string(x.rows()) +
                                 " rows (features), the network expects " +
                                 std::to_string(layout_.input_width));
  }
  if (batch < 1 || batch > ws.max_batch()) {
    return Status::invalid_input("network forward: batch of " + std::to_string(batch) +
                                 " rows does not fit the workspace (1 to " +
                                 std::to_string(ws.max_batch()) +
                                 "); make the workspace larger or the batch smaller");
  }
  const std::size_t num_layers = layout_.chain_size();
  assert(ws.pre_.size() == num_layers);
  ws.batch_ = batch;
  for (std::size_t l = 0; l < num_layers; ++l) {
    const LayerLayout& layer = layout_.layers[l];
    // z_l = W_l a_{l-1} + b_l, with a_0 = x.
    ConstMatRef<S> input = l == 0 ? x : ConstMatRef<S>(ws.post_[l - 1].leftCols(batch));
    dense_forward<S>(ws.pre_[l].leftCols(batch), input, weight_view(theta.data(), layer),
                     bias_view(theta.data(), layer));
    // a_l = f(z_l) on hidden layers; the output layer's z is the logits.
    if (l + 1 < num_layers) {
      activation_forward<S>(ws.post_[l].leftCols(batch), ws.pre_[l].leftCols(batch),
                            layer.activation);
    }
  }
  if (layout_.linear_path) {
    // logits += W_lin x + b_lin (the linear path beside the chain).
    const LayerLayout& linear = layout_.layers.back();
    dense_forward_add<S>(ws.pre_.back().leftCols(batch), x, weight_view(theta.data(), linear),
                         bias_view(theta.data(), linear));
  }
  log_softmax_forward<S>(ws.log_probs_.leftCols(batch), ws.pre_.back().leftCols(batch));
  return Status();
}

template <typename S>
Result<double> Network<S>::log_likelihood(VecRef<S> log_lik, const Workspace<S>& ws,
                                          std::span<const std::int32_t> labels) const {
  const Index batch = ws.batch();
  if (static_cast<Index>(labels.size()) != batch || log_lik.size() < batch) {
    return Status::invalid_input("network log-likelihood: " + std::to_string(labels.size()) +
                                 " labels for a batch of " + std::to_string(batch) + " rows");
  }
  double sum = 0;
  for (Index n = 0; n < batch; ++n) {
    const std::int32_t y = labels[static_cast<std::size_t>(n)];
    if (y < 0 || y >= layout_.num_classes) {
      return Status::invalid_input("network log-likelihood: label " + std::to_string(y) +
                                   " of batch row " + std::to_string(n) + " is outside 0.." +
                                   std::to_string(layout_.num_classes - 1));
    }
    log_lik(n) = ws.log_probs_(y, n);
    sum += static_cast<double>(log_lik(n));
  }
  return sum;
}

template <typename S>
void Network<S>::backward(VecRef<S> d_theta, Workspace<S>& ws, ConstVecRef<S> theta,
                          ConstMatRef<S> x, std::span<const std::int32_t> labels,
                          S scale) const {
  const Index batch = ws.batch();
  assert(batch == x.cols() && d_theta.size() == layout_.num_params);
  // d z_L = scale * (softmax - onehot(y)) on the logits.
  softmax_xent_backward<S>(ws.d_pre_.back().leftCols(batch), ws.log_probs_.leftCols(batch),
                           labels, scale);
  if (layout_.linear_path) {
    const LayerLayout& linear = layout_.layers.back();
    Eigen::Map<MatX<S>> d_w(d_theta.data() + linear.weight_offset, linear.out, linear.in);
    Eigen::Map<VecX<S>> d_b(d_theta.data() + linear.bias_offset, linear.out);
    dense_backward_params<S>(d_w, d_b, ws.d_pre_.back().leftCols(batch), x);
  }
  for (std::size_t l = layout_.chain_size(); l-- > 0;) {
    const LayerLayout& layer = layout_.layers[l];
    Eigen::Map<MatX<S>> d_w(d_theta.data() + layer.weight_offset, layer.out, layer.in);
    Eigen::Map<VecX<S>> d_b(d_theta.data() + layer.bias_offset, layer.out);
    if (l == 0) {
      dense_backward_params<S>(d_w, d_b, ws.d_pre_[0].leftCols(batch), x);
      break;
    }
    // d a_{l-1} = W_l^T d z_l lands in the buffer of d z_{l-1}, which then becomes
    // d z_{l-1} = d a_{l-1} * f'(z_{l-1}) in place.
    auto d_prev = ws.d_pre_[l - 1].leftCols(batch);
    dense_backward<S>(d_prev, d_w, d_b, ws.d_pre_[l].leftCols(batch),
                      ws.post_[l - 1].leftCols(batch), weight_view(theta.data(), layer));
    activation_backward<S>(d_prev, d_prev, ws.pre_[l - 1].leftCols(batch),
                           ws.post_[l - 1].leftCols(batch), layout_.layers[l - 1].activation);
  }
}

template class Network<float>;
template class Network<double>;

}  // namespace credence
