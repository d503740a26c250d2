// Dense (fully connected) layer kernels: y = W x + b and its backward, fast and plain.
#pragma once

#include "credence/net.h"

namespace credence {

// y = W x + b.  x: (in, B), w: (out, in), b: (out), y: (out, B). Overwrites y.
template <typename S>
void dense_forward(MatRef<S> y, ConstMatRef<S> x, ConstMatRef<S> w, ConstVecRef<S> b);
// y += W x + b (a second map into the same outputs, such as the linear path's).
template <typename S>
void dense_forward_add(MatRef<S> y, ConstMatRef<S> x, ConstMatRef<S> w, ConstVecRef<S> b);
// Adds d_y x^T into d_w and the row sums of d_y into d_b; overwrites d_x = W^T d_y.
// d_x: (in, B), d_w: (out, in), d_b: (out), d_y: (out, B).
template <typename S>
void dense_backward(MatRef<S> d_x, MatRef<S> d_w, VecRef<S> d_b, ConstMatRef<S> d_y,
                    ConstMatRef<S> x, ConstMatRef<S> w);
// The first layer's backward: no input gradient is needed.
template <typename S>
void dense_backward_params(MatRef<S> d_w, VecRef<S> d_b, ConstMatRef<S> d_y, ConstMatRef<S> x);

// Obviously correct loop versions of the two kernels, the reference for the fast ones.
template <typename S>
void dense_forward_loop(MatRef<S> y, ConstMatRef<S> x, ConstMatRef<S> w, ConstVecRef<S> b);
template <typename S>
void dense_backward_loop(MatRef<S> d_x, MatRef<S> d_w, VecRef<S> d_b, ConstMatRef<S> d_y,
                         ConstMatRef<S> x, ConstMatRef<S> w);

}  // namespace credence
