// Softmax cross-entropy kernels. A column holds K <= a few hundred logits of one row.
#include "net/loss.h"

#include <cassert>
#include <cmath>

namespace credence {

template <typename S>
void log_softmax_forward(MatRef<S> log_probs, ConstMatRef<S> logits) {
  assert(log_probs.rows() == logits.rows() && log_probs.cols() == logits.cols());
  for (Index n = 0; n < logits.cols(); ++n) {
    // (z - max z) - log sum exp(z - max z): subtracting the max first keeps the digits
    // that z - logsumexp(z) would lose when |z| is large (1e4 in float has ulp 1e-3).
    const S top = logits.col(n).maxCoeff();
    log_probs.col(n) = logits.col(n).array() - top;
    const S log_sum = std::log(log_probs.col(n).array().exp().sum());
    log_probs.col(n).array() -= log_sum;
  }
}

template <typename S>
void softmax_xent_backward(MatRef<S> d_logits, ConstMatRef<S> log_probs,
                           std::span<const std::int32_t> labels, S scale) {
  assert(d_logits.rows() == log_probs.rows() && d_logits.cols() == log_probs.cols());
  assert(static_cast<Index>(labels.size()) == log_probs.cols());
  d_logits = scale * log_probs.array().exp().matrix();
  for (Index n = 0; n < log_probs.cols(); ++n) {
    const auto y = static_cast<Index>(labels[static_cast<std::size_t>(n)]);
    assert(y >= 0 && y < log_probs.rows());
    d_logits(y, n) -= scale;
  }
}

template void log_softmax_forward<float>(MatRef<float>, ConstMatRef<float>);
template void log_softmax_forward<double>(MatRef<double>, ConstMatRef<double>);
template void softmax_xent_backward<float>(MatRef<float>, ConstMatRef<float>,
                                           std::span<const std::int32_t>, float);
template void softmax_xent_backward<double>(MatRef<double>, ConstMatRef<double>,
                                            std::span<const std::int32_t>, double);

}  // namespace credence
