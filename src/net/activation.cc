// Activation kernels. Elementwise, so d_z and d_a may share storage.
#include "net/activation.h"

#include <cassert>

namespace credence {

template <typename S>
void activation_forward(MatRef<S> a, ConstMatRef<S> z, Activation f) {
  assert(a.rows() == z.rows() && a.cols() == z.cols());
  switch (f) {
    case Activation::kRelu:
      a = z.cwiseMax(S(0));
      return;
    case Activation::kTanh:
      a = z.array().tanh().matrix();
      return;
    case Activation::kSigmoid:
      // exp(-z) overflows to inf for very negative z and the quotient is then 0: correct.
      a = (S(1) / (S(1) + (-z.array()).exp())).matrix();
      return;
    case Activation::kSoftplus:
      // log(1 + e^z) = max(z, 0) + log1p(e^-|z|), which never overflows.
      a = (z.array().max(S(0)) + (-z.array().abs()).exp().log1p()).matrix();
      return;
    case Activation::kIdentity:
      a = z;
      return;
  }
}

template <typename S>
void activation_backward(MatRef<S> d_z, ConstMatRef<S> d_a, ConstMatRef<S> z, ConstMatRef<S> a,
                         Activation f) {
  assert(d_z.rows() == z.rows() && d_z.cols() == z.cols());
  switch (f) {
    case Activation::kRelu:
      d_z = (z.array() > S(0)).select(d_a.array(), S(0)).matrix();
      return;
    case Activation::kTanh:
      d_z = (d_a.array() * (S(1) - a.array().square())).matrix();
      return;
    case Activation::kSigmoid:
      d_z = (d_a.array() * a.array() * (S(1) - a.array())).matrix();
      return;
    case Activation::kSoftplus:
      // f'(z) = sigmoid(z).
      d_z = (d_a.array() / (S(1) + (-z.array()).exp())).matrix();
      return;
    case Activation::kIdentity:
      d_z = d_a;
      return;
  }
}

template void activation_forward<float>(MatRef<float>, ConstMatRef<float>, Activation);
template void activation_forward<double>(MatRef<double>, ConstMatRef<double>, Activation);
template void activation_backward<float>(MatRef<float>, ConstMatRef<float>, ConstMatRef<float>,
                                         ConstMatRef<float>, Activation);
template void activation_backward<double>(MatRef<double>, ConstMatRef<double>,
                                          ConstMatRef<double>, ConstMatRef<double>, Activation);

}  // namespace credence
