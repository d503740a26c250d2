// Resolving a NetSpec into concrete shapes and flat-vector offsets for D inputs, K classes.
#include <algorithm>
#include <string>

#include "credence/net.h"

namespace credence {
namespace {

// Parameters beyond this are almost certainly a typo in a width (4 GiB of float32).
constexpr Index kMaxParams = Index{1} << 30;

}  // namespace

Index ParamLayout::max_width() const {
  Index widest = 0;
  for (const LayerLayout& layer : layers) widest = std::max(widest, layer.out);
  return widest;
}

Result<ParamLayout> resolve_layout(const NetSpec& spec, Index input_width, Index num_classes) {
  if (input_width < 1) {
    return Status::invalid_input("building the network: the data have " +
                                 std::to_string(input_width) +
                                 " input columns; at least one is needed");
  }
  if (num_classes < 2) {
    return Status::invalid_input("building the network: the target has " +
                                 std::to_string(num_classes) +
                                 " class(es); a classifier needs at least 2");
  }
  if (input_width > kMaxParams) {  // also keeps out * fan_in below from overflowing
    return Status::invalid_input("building the network: " + std::to_string(input_width) +
                                 " input columns give more than " + std::to_string(kMaxParams) +
                                 " parameters");
  }
  CREDENCE_RETURN_IF_ERROR(validate_net_spec(spec));
  ParamLayout layout;
  layout.input_width = input_width;
  layout.num_classes = num_classes;
  Index fan_in = input_width;
  Index offset = 0;
  auto add_layer = [&](Index out, Activation activation) -> Status {
    if (out < 1 || out > kMaxLayerWidth) {
      return Status::invalid_input("building the network: layer width " + std::to_string(out) +
                                   " is outside 1.." + std::to_string(kMaxLayerWidth));
    }
    LayerLayout layer;
    layer.in = fan_in;
    layer.out = out;
    layer.activation = activation;
    layer.weight_offset = offset;
    layer.bias_offset = offset + out * fan_in;
    offset = layer.bias_offset + out;
    if (offset > kMaxParams) {
      return Status::invalid_input("building the network: more than " +
                                   std::to_string(kMaxParams) +
                                   " parameters; use narrower hidden layers");
    }
    layout.layers.push_back(layer);
    fan_in = out;
    return Status();
  };
  for (const HiddenLayerSpec& hidden : spec.hidden) {
    CREDENCE_RETURN_IF_ERROR(add_layer(hidden.width, hidden.activation));
  }
  CREDENCE_RETURN_IF_ERROR(add_layer(num_classes, Activation::kIdentity));
  if (spec.linear_path && !spec.hidden.empty()) {
    fan_in = input_width;
    CREDENCE_RETURN_IF_ERROR(add_layer(num_classes, Activation::kIdentity));
    layout.linear_path = true;
  }
  layout.num_params = offset;
  return layout;
}

}  // namespace credence
