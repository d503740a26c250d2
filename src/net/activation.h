// Elementwise activations (relu, tanh, sigmoid, softplus, identity) forward and backward.
#pragma once

#include "credence/net.h"

namespace credence {

// a = f(z).  a, z: (out, B). Overwrites a.
template <typename S>
void activation_forward(MatRef<S> a, ConstMatRef<S> z, Activation f);
// d_z = d_a * f'(z), using the saved z and a = f(z). Overwrites d_z; d_z may be d_a.
// d_z, d_a, z, a: (out, B).
template <typename S>
void activation_backward(MatRef<S> d_z, ConstMatRef<S> d_a, ConstMatRef<S> z, ConstMatRef<S> a,
                         Activation f);

}  // namespace credence
