// Softmax cross-entropy through log-sum-exp: log-probabilities forward, logit gradient back.
#pragma once

#include <cstdint>
#include <span>

#include "credence/net.h"

namespace credence {

// log_probs = z - logsumexp(z) per column, with logsumexp(z) = max z + log sum exp(z - max z)
// (docs/methods.md section 1). log_probs, logits: (K, B). Overwrites log_probs.
template <typename S>
void log_softmax_forward(MatRef<S> log_probs, ConstMatRef<S> logits);
// d_logits = scale * (softmax(z) - onehot(y)) per column, the gradient of
// scale * sum_i -log p(y_i | x_i). Overwrites d_logits. d_logits, log_probs: (K, B).
// REQUIRES: labels.size() == B and every label in [0, K).
template <typename S>
void softmax_xent_backward(MatRef<S> d_logits, ConstMatRef<S> log_probs,
                           std::span<const std::int32_t> labels, S scale);

}  // namespace credence
