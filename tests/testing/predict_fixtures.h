// A tiny preprocessing and network shared by the predict tests.
#pragma once

#include <string>

#include "credence/data.h"
#include "credence/net.h"

namespace credence::testing {

/// Two numeric inputs, three classes "a", "b", "c", target "y".
inline Preprocessing two_input_preprocessing() {
  Preprocessing p;
  p.input_width = 2;
  p.class_names = {"a", "b", "c"};
  p.target = "y";
  return p;
}

/// One hidden tanh layer of width 4, as net text.
inline std::string small_net() {
  NetSpec spec;
  spec.hidden = {{4, Activation::kTanh}};
  return format_net_spec(spec);
}

}  // namespace credence::testing
