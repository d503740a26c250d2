// Dense layer kernels: one GEMM each way (Eigen, routed to BLAS for large float products).
#include "net/dense.h"

#include <algorithm>
#include <cassert>

namespace credence {

namespace {

// out = w * x, or w^T * x with `transpose_w`. Eigen evaluates `out = a * b` as a memset of
// out followed by out += a * b; on float with BLAS, one sgemm with beta = 0 writes out
// directly and saves that pass (a few percent of a small-shape step).
template <typename S>
void product(MatRef<S> out, ConstMatRef<S> w, ConstMatRef<S> x, bool transpose_w) {
  if (transpose_w) {
    out.noalias() = w.transpose() * x;
  } else {
    out.noalias() = w * x;
  }
}

#ifdef CREDENCE_HAVE_BLAS
template <>
void product<float>(MatRef<float> out, ConstMatRef<float> w, ConstMatRef<float> x,
                    bool transpose_w) {
  const int m = static_cast<int>(out.rows());
  const int n = static_cast<int>(out.cols());
  const int k = static_cast<int>(x.rows());
  if (m == 0 || n == 0) return;
  if (k == 0) {
    out.setZero();
    return;
  }
  const char trans_w = transpose_w ? 'T' : 'N';
  const char trans_x = 'N';
  const float one = 1.0f;
  const float zero = 0.0f;
  const int ldw = static_cast<int>(std::max<Index>(1, w.outerStride()));
  const int ldx = static_cast<int>(std::max<Index>(1, x.outerStride()));
  const int ldo = static_cast<int>(std::max<Index>(1, out.outerStride()));
  sgemm_(&trans_w, &trans_x, &m, &n, &k, &one, w.data(), &ldw, x.data(), &ldx, &zero, out.data(),
         &ldo);
}
#endif

}  // namespace

template <typename S>
void dense_forward(MatRef<S> y, ConstMatRef<S> x, ConstMatRef<S> w, ConstVecRef<S> b) {
  assert(y.rows() == w.rows() && y.cols() == x.cols() && w.cols() == x.rows());
  assert(b.size() == w.rows());
  product<S>(y, w, x, false);  // (out, in) (in, B)
  y.colwise() += b;
}

template <typename S>
void dense_forward_add(MatRef<S> y, ConstMatRef<S> x, ConstMatRef<S> w, ConstVecRef<S> b) {
  assert(y.rows() == w.rows() && y.cols() == x.cols() && w.cols() == x.rows());
  assert(b.size() == w.rows());
  y.noalias() += w * x;  // (out, in) (in, B)
  y.colwise() += b;
}

template <typename S>
void dense_backward_params(MatRef<S> d_w, VecRef<S> d_b, ConstMatRef<S> d_y, ConstMatRef<S> x) {
  assert(d_w.rows() == d_y.rows() && d_w.cols() == x.rows() && d_y.cols() == x.cols());
  assert(d_b.size() == d_y.rows());
  d_w.noalias() += d_y * x.transpose();  // (out, B) (B, in)
  d_b += d_y.rowwise().sum();
}

template <typename S>
void dense_backward(MatRef<S> d_x, MatRef<S> d_w, VecRef<S> d_b, ConstMatRef<S> d_y,
                    ConstMatRef<S> x, ConstMatRef<S> w) {
  assert(d_x.rows() == x.rows() && d_x.cols() == x.cols());
  dense_backward_params<S>(d_w, d_b, d_y, x);
  product<S>(d_x, w, d_y, true);  // (in, out) (out, B)
}

template <typename S>
void dense_forward_loop(MatRef<S> y, ConstMatRef<S> x, ConstMatRef<S> w, ConstVecRef<S> b) {
  for (Index n = 0; n < x.cols(); ++n) {
    for (Index o = 0; o < w.rows(); ++o) {
      S sum = b(o);
      for (Index i = 0; i < w.cols(); ++i) sum += w(o, i) * x(i, n);
      y(o, n) = sum;
    }
  }
}

template <typename S>
void dense_backward_loop(MatRef<S> d_x, MatRef<S> d_w, VecRef<S> d_b, ConstMatRef<S> d_y,
                         ConstMatRef<S> x, ConstMatRef<S> w) {
  for (Index n = 0; n < x.cols(); ++n) {
    for (Index i = 0; i < w.cols(); ++i) {
      S sum = 0;
      for (Index o = 0; o < w.rows(); ++o) sum += w(o, i) * d_y(o, n);
      d_x(i, n) = sum;
    }
    for (Index o = 0; o < w.rows(); ++o) {
      d_b(o) += d_y(o, n);
      for (Index i = 0; i < w.cols(); ++i) d_w(o, i) += d_y(o, n) * x(i, n);
    }
  }
}

#define CREDENCE_INSTANTIATE_DENSE(S)                                                         \
  template void dense_forward<S>(MatRef<S>, ConstMatRef<S>, ConstMatRef<S>, ConstVecRef<S>);  \
  template void dense_forward_add<S>(MatRef<S>, ConstMatRef<S>, ConstMatRef<S>, ConstVecRef<S>); \
  template void dense_backward<S>(MatRef<S>, MatRef<S>, VecRef<S>, ConstMatRef<S>,            \
                                  ConstMatRef<S>, ConstMatRef<S>);                            \
  template void dense_backward_params<S>(MatRef<S>, VecRef<S>, ConstMatRef<S>, ConstMatRef<S>); \
  template void dense_forward_loop<S>(MatRef<S>, ConstMatRef<S>, ConstMatRef<S>,              \
                                      ConstVecRef<S>);                                        \
  template void dense_backward_loop<S>(MatRef<S>, MatRef<S>, VecRef<S>, ConstMatRef<S>,       \
                                       ConstMatRef<S>, ConstMatRef<S>);
CREDENCE_INSTANTIATE_DENSE(float)
CREDENCE_INSTANTIATE_DENSE(double)
#undef CREDENCE_INSTANTIATE_DENSE

}  // namespace credence
