// NetSpec helpers: activation names, validation, canonical text, the options-built spec.
#include <array>
#include <charconv>
#include <cmath>
#include <string>
#include <utility>

#include "credence/net.h"

namespace credence {
namespace {

constexpr std::array<std::pair<Activation, std::string_view>, 5> kActivationNames = {{
    {Activation::kRelu, "relu"},
    {Activation::kTanh, "tanh"},
    {Activation::kSigmoid, "sigmoid"},
    {Activation::kSoftplus, "softplus"},
    {Activation::kIdentity, "identity"},
}};

bool positive_finite(double value) { return std::isfinite(value) && value > 0; }

// Shortest text that reads back to the same double.
std::string number_text(double value) {
  std::array<char, 32> buffer{};
  auto [end, error] = std::to_chars(buffer.data(), buffer.data() + buffer.size(), value);
  return error == std::errc() ? std::string(buffer.data(), end) : std::to_string(value);
}

}  // namespace

std::string_view activation_name(Activation activation) {
  for (const auto& [value, name] : kActivationNames) {
    if (value == activation) return name;
  }
  return "unknown";
}

Result<Activation> parse_activation(std::string_view name) {
  for (const auto& [value, spelling] : kActivationNames) {
    if (spelling == name) return value;
  }
  return Status::invalid_input("unknown activation '" + std::string(name) +
                               "'; use relu, tanh, sigmoid, softplus or identity");
}

Status validate_net_spec(const NetSpec& spec) {
  for (std::size_t l = 0; l < spec.hidden.size(); ++l) {
    const Index width = spec.hidden[l].width;
    if (width < 1 || width > kMaxLayerWidth) {
      return Status::invalid_input("hidden layer " + std::to_string(l + 1) + ": width " +
                                   std::to_string(width) + " is outside 1.." +
                                   std::to_string(kMaxLayerWidth));
    }
  }
  const PriorSpec& prior = spec.prior;
  if (!positive_finite(prior.weight_scale) || !positive_finite(prior.bias_scale)) {
    return Status::invalid_input("prior: scales must be positive and finite (scale=" +
                                 number_text(prior.weight_scale) +
                                 ", bias_scale=" + number_text(prior.bias_scale) + ")");
  }
  if (!positive_finite(prior.hyper_shape) ||
      (prior.hyper_rate && !positive_finite(*prior.hyper_rate)) ||
      !positive_finite(prior.gibbs_passes)) {
    return Status::invalid_input("prior: shape, rate and every must be positive and finite");
  }
  if (prior.learn_scale && prior.weight_scale != 1.0) {
    return Status::invalid_input("prior: a learned scale (scale=auto) starts from scale 1; "
                                 "set per-layer starting scales with layer_prior");
  }
  const int num_layers = static_cast<int>(spec.hidden.size()) + 1;
  std::vector<bool> seen(static_cast<std::size_t>(num_layers), false);
  for (const LayerPriorOverride& over : prior.overrides) {
    if (over.layer < 0 || over.layer >= num_layers) {
      return Status::invalid_input("layer prior: layer " + std::to_string(over.layer + 1) +
                                   " does not exist; the network has " +
                                   std::to_string(num_layers) + " layers counting the output");
    }
    if (seen[static_cast<std::size_t>(over.layer)]) {
      return Status::invalid_input("layer prior: layer " + std::to_string(over.layer + 1) +
                                   " has two overrides; give one");
    }
    seen[static_cast<std::size_t>(over.layer)] = true;
    if ((over.weight_scale && !positive_finite(*over.weight_scale)) ||
        (over.bias_scale && !positive_finite(*over.bias_scale))) {
      return Status::invalid_input("layer prior: layer " + std::to_string(over.layer + 1) +
                                   ": scales must be positive and finite");
    }
  }
  return Status();
}

std::string format_net_spec(const NetSpec& spec) {
  std::string text = "# credence network\ncredence-net " + std::to_string(kNetFormatVersion) +
                     "\n";
  for (const HiddenLayerSpec& hidden : spec.hidden) {
    text += "hidden " + std::to_string(hidden.width) + " " +
            std::string(activation_name(hidden.activation)) + "\n";
  }
  if (spec.linear_path) text += "linear_path on\n";
  const PriorSpec& prior = spec.prior;
  text += "prior gaussian scale=" +
          (prior.learn_scale ? std::string("auto") : number_text(prior.weight_scale)) +
          " fan_in=" + (prior.fan_in_scaling ? "on" : "off") +
          " bias_scale=" + number_text(prior.bias_scale);
  if (prior.learn_scale) {
    text += " shape=" + number_text(prior.hyper_shape) +
            " rate=" + (prior.hyper_rate ? number_text(*prior.hyper_rate) : "matched") +
            " every=" + number_text(prior.gibbs_passes);
  }
  text += "\n";
  for (const LayerPriorOverride& over : prior.overrides) {
    text += "layer_prior ";
    text += over.layer == static_cast<int>(spec.hidden.size()) ? std::string("output")
                                                               : std::to_string(over.layer + 1);
    if (over.weight_scale) text += " scale=" + number_text(*over.weight_scale);
    if (over.bias_scale) text += " bias_scale=" + number_text(*over.bias_scale);
    text += "\n";
  }
  return text;
}

Result<NetSpec> net_spec_from_options(std::span<const Index> hidden_widths,
                                      std::string_view activation, PriorSpec prior) {
  Result<Activation> parsed = parse_activation(activation);
  if (!parsed.ok()) return parsed.status();
  NetSpec spec;
  for (Index width : hidden_widths) spec.hidden.push_back({width, *parsed});
  spec.prior = std::move(prior);
  CREDENCE_RETURN_IF_ERROR(validate_net_spec(spec));
  return spec;
}

}  // namespace credence
