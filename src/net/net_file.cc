// Net-file parser: line-oriented statements, errors as "file:line:column: found X, expected Y".
#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <system_error>
#include <vector>

#include "credence/net.h"

namespace credence {
namespace {

constexpr std::string_view kVersionKeyword = "credence-net";

struct Token {
  std::string_view text;
  int column = 0;  // 1-based byte column of the first character
};

// Splits one line (comment already removed) at spaces and tabs.
std::vector<Token> split_tokens(std::string_view line) {
  std::vector<Token> tokens;
  std::size_t i = 0;
  while (i < line.size()) {
    while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
    const std::size_t start = i;
    while (i < line.size() && line[i] != ' ' && line[i] != '\t') ++i;
    if (i > start) tokens.push_back({line.substr(start, i - start), static_cast<int>(start) + 1});
  }
  return tokens;
}

bool parse_integer(std::string_view text, long long& value) {
  auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  return error == std::errc() && end == text.data() + text.size();
}

bool parse_positive_number(std::string_view text, double& value) {
  auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), value);
  return error == std::errc() && end == text.data() + text.size() && std::isfinite(value) &&
         value > 0;
}

class Parser {
 public:
  explicit Parser(std::string_view file_name) : file_name_(file_name) {}

  Result<NetSpec> parse(std::string_view text) {
    int line_number = 0;
    std::size_t start = 0;
    while (start <= text.size()) {
      std::size_t end = text.find('\n', start);
      if (end == std::string_view::npos) end = text.size();
      std::string_view line = text.substr(start, end - start);
      ++line_number;
      line_ = line_number;
      if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
      if (std::size_t hash = line.find('#'); hash != std::string_view::npos) {
        line = line.substr(0, hash);
      }
      std::vector<Token> tokens = split_tokens(line);
      line_end_column_ = static_cast<int>(line.size()) + 1;
      if (!tokens.empty()) CREDENCE_RETURN_IF_ERROR(statement(tokens));
      if (end == text.size()) break;
      start = end + 1;
    }
    if (version_line_ == 0) {  // no statement at all: any other one would have failed
      line_ = 1;
      return error(1, "no statement (only blank lines and comments)",
                   "the version line 'credence-net 1'");
    }
    CREDENCE_RETURN_IF_ERROR(check_overrides());
    // Without a prior line the prior learns its scale (docs/methods.md section 15).
    if (prior_line_ == 0) spec_.prior.learn_scale = true;
    return spec_;
  }

 private:
  struct OverrideSite {
    int line = 0;
    int column = 0;
  };

  Status error(int column, std::string_view found, std::string_view expected) const {
    return Status::invalid_input(std::string(file_name_) + ":" + std::to_string(line_) + ":" +
                                 std::to_string(column) + ": found " + std::string(found) +
                                 ", expected " + std::string(expected));
  }
  Status error_at(const Token& token, std::string_view expected) const {
    // Appending (not operator+ on a literal) sidesteps a GCC 12 -Wrestrict false positive.
    // Binary junk is shown escaped and cut short: a message stays one readable line.
    constexpr std::size_t kShown = 40;
    std::string found(1, '\'');
    for (std::size_t i = 0; i < token.text.size() && i < kShown; ++i) {
      const auto byte = static_cast<unsigned char>(token.text[i]);
      if (byte >= 0x20 && byte < 0x7F) {
        found.push_back(static_cast<char>(byte));
      } else {
        static constexpr char kHex[] = "0123456789abcdef";
        found.append("\\x").push_back(kHex[byte >> 4]);
        found.push_back(kHex[byte & 0xF]);
      }
    }
    if (token.text.size() > kShown) found.append("...");
    found.push_back('\'');
    return error(token.column, found, expected);
  }
  Status end_of_line(std::string_view expected) const {
    return error(line_end_column_, "end of line", expected);
  }
  Status no_more(const std::vector<Token>& tokens, std::size_t used) const {
    if (tokens.size() > used) return error_at(tokens[used], "end of line");
    return Status();
  }

  Status statement(const std::vector<Token>& tokens) {
    const Token& keyword = tokens[0];
    if (version_line_ == 0) {
      if (keyword.text != kVersionKeyword) {
        return error_at(keyword, "the version line 'credence-net 1' before anything else");
      }
      return version(tokens);
    }
    if (keyword.text == "hidden") return hidden(tokens);
    if (keyword.text == "prior") return prior(tokens);
    if (keyword.text == "layer_prior") return layer_prior(tokens);
    if (keyword.text == "linear_path") return linear_path(tokens);
    if (keyword.text == kVersionKeyword) {
      return error_at(keyword, "one version line (the first is on line " +
                                   std::to_string(version_line_) + ")");
    }
    return error_at(keyword, "a statement: hidden, prior, layer_prior or linear_path");
  }

  Status version(const std::vector<Token>& tokens) {
    const std::string expected = "the format version " + std::to_string(kNetFormatVersion);
    if (tokens.size() < 2) return end_of_line(expected);
    long long value = 0;
    if (!parse_integer(tokens[1].text, value) || value != kNetFormatVersion) {
      return error_at(tokens[1], expected + " (this build reads credence-net " +
                                     std::to_string(kNetFormatVersion) + " files)");
    }
    version_line_ = line_;
    return no_more(tokens, 2);
  }

  Status hidden(const std::vector<Token>& tokens) {
    const std::string width_expected =
        "a layer width: a whole number of units from 1 to " + std::to_string(kMaxLayerWidth);
    if (tokens.size() < 2) return end_of_line(width_expected);
    long long width = 0;
    if (!parse_integer(tokens[1].text, width) || width < 1 || width > kMaxLayerWidth) {
      return error_at(tokens[1], width_expected);
    }
    constexpr std::string_view kActivations =
        "an activation: relu, tanh, sigmoid, softplus or identity";
    if (tokens.size() < 3) return end_of_line(kActivations);
    Result<Activation> activation = parse_activation(tokens[2].text);
    if (!activation.ok()) return error_at(tokens[2], kActivations);
    spec_.hidden.push_back({static_cast<Index>(width), *activation});
    return no_more(tokens, 3);
  }

  Status linear_path(const std::vector<Token>& tokens) {
    if (linear_path_line_ != 0) {
      return error_at(tokens[0], "one linear_path line (the first is on line " +
                                     std::to_string(linear_path_line_) + ")");
    }
    linear_path_line_ = line_;
    constexpr std::string_view kSwitch = "on or off";
    if (tokens.size() < 2) return end_of_line(kSwitch);
    if (tokens[1].text != "on" && tokens[1].text != "off") return error_at(tokens[1], kSwitch);
    spec_.linear_path = tokens[1].text == "on";
    return no_more(tokens, 2);
  }

  Status prior(const std::vector<Token>& tokens) {
    if (prior_line_ != 0) {
      return error_at(tokens[0], "one prior line (the first is on line " +
                                     std::to_string(prior_line_) + ")");
    }
    prior_line_ = line_;
    if (tokens.size() < 2) return end_of_line("a prior family: gaussian");
    if (tokens[1].text != "gaussian") return error_at(tokens[1], "a prior family: gaussian");
    spec_.prior.family = PriorFamily::kGaussian;
    std::vector<std::string_view> seen;
    std::vector<Token> hyper;  // shape=, rate=, every=: read only with scale=auto
    for (std::size_t i = 2; i < tokens.size(); ++i) {
      std::string_view key;
      Token value;
      CREDENCE_RETURN_IF_ERROR(setting(tokens[i],
                                       {"scale", "fan_in", "bias_scale", "shape", "rate", "every"},
                                       seen, key, value));
      if (key == "fan_in") {
        if (value.text != "on" && value.text != "off") {
          return error_at(value, "on or off after fan_in=");
        }
        spec_.prior.fan_in_scaling = value.text == "on";
        continue;
      }
      if (key == "scale" && value.text == "auto") {
        spec_.prior.learn_scale = true;
        continue;
      }
      if (key == "rate" && value.text == "matched") {
        spec_.prior.hyper_rate.reset();
        hyper.push_back(tokens[i]);
        continue;
      }
      double number = 0;
      if (!parse_positive_number(value.text, number)) {
        return error_at(value, key == "scale" ? std::string("a positive number or auto after scale=")
                                              : "a positive number after " + std::string(key) + "=");
      }
      if (key == "scale") {
        spec_.prior.weight_scale = number;
        spec_.prior.learn_scale = false;
      } else if (key == "bias_scale") {
        spec_.prior.bias_scale = number;
      } else {
        hyper.push_back(tokens[i]);
        (key == "shape" ? spec_.prior.hyper_shape
                        : key == "rate" ? spec_.prior.hyper_rate.emplace()
                                        : spec_.prior.gibbs_passes) = number;
      }
    }
    if (!spec_.prior.learn_scale && !hyper.empty()) {
      return error_at(hyper.front(), "no shape=, rate= or every= without scale=auto (they set "
                                     "the learned scale's hyperprior)");
    }
    return Status();
  }

  Status layer_prior(const std::vector<Token>& tokens) {
    constexpr std::string_view kLayerExpected =
        "a layer number (1 for the first hidden layer) or 'output'";
    if (tokens.size() < 2) return end_of_line(kLayerExpected);
    LayerPriorOverride over;
    if (tokens[1].text == "output") {
      over.layer = -1;  // resolved once every hidden line is known
    } else {
      long long number = 0;
      if (!parse_integer(tokens[1].text, number) || number < 1 || number > kMaxLayerWidth) {
        return error_at(tokens[1], kLayerExpected);
      }
      over.layer = static_cast<int>(number - 1);
    }
    if (tokens.size() < 3) return end_of_line("a setting: scale=NUMBER or bias_scale=NUMBER");
    std::vector<std::string_view> seen;
    for (std::size_t i = 2; i < tokens.size(); ++i) {
      std::string_view key;
      Token value;
      CREDENCE_RETURN_IF_ERROR(setting(tokens[i], {"scale", "bias_scale"}, seen, key, value));
      double number = 0;
      if (!parse_positive_number(value.text, number)) {
        return error_at(value, "a positive number after " + std::string(key) + "=");
      }
      (key == "scale" ? over.weight_scale : over.bias_scale) = number;
    }
    spec_.prior.overrides.push_back(over);
    override_sites_.push_back({line_, tokens[1].column});
    return Status();
  }

  // Splits "key=value", checking the key against `keys` and that it appears once.
  Status setting(const Token& token, std::initializer_list<std::string_view> keys,
                 std::vector<std::string_view>& seen, std::string_view& key, Token& value) {
    std::string key_list;
    for (std::string_view k : keys) key_list += (key_list.empty() ? "" : ", ") + std::string(k);
    const std::size_t equals = token.text.find('=');
    if (equals == std::string_view::npos) {
      return error_at(token, "a setting KEY=VALUE with KEY one of " + key_list);
    }
    key = token.text.substr(0, equals);
    bool known = false;
    for (std::string_view k : keys) known = known || k == key;
    if (!known) return error_at(token, "a setting KEY=VALUE with KEY one of " + key_list);
    for (std::string_view k : seen) {
      if (k == key) return error_at(token, "each setting once per line");
    }
    seen.push_back(key);
    value = {token.text.substr(equals + 1), token.column + static_cast<int>(equals) + 1};
    if (value.text.empty()) {
      return error(value.column, "nothing after '='", "a value for " + std::string(key));
    }
    return Status();
  }

  // Layer numbers can only be checked once all hidden lines are read.
  Status check_overrides() {
    const int num_layers = static_cast<int>(spec_.hidden.size()) + 1;
    std::vector<int> first_line(static_cast<std::size_t>(num_layers), 0);
    for (std::size_t i = 0; i < spec_.prior.overrides.size(); ++i) {
      LayerPriorOverride& over = spec_.prior.overrides[i];
      const OverrideSite& site = override_sites_[i];
      line_ = site.line;
      if (over.layer == -1) over.layer = num_layers - 1;
      if (over.layer >= num_layers) {
        return error(site.column, "layer " + std::to_string(over.layer + 1),
                     "a layer from 1 to " + std::to_string(num_layers) + " (the network has " +
                         std::to_string(num_layers - 1) + " hidden layers and the output)");
      }
      int& first = first_line[static_cast<std::size_t>(over.layer)];
      if (first != 0) {
        return error(site.column, "a second layer_prior for layer " +
                                      std::to_string(over.layer + 1),
                     "one per layer (the first is on line " + std::to_string(first) + ")");
      }
      first = site.line;
    }
    return Status();
  }

  std::string_view file_name_;
  NetSpec spec_;
  int line_ = 0;
  int line_end_column_ = 1;
  int version_line_ = 0;
  int prior_line_ = 0;
  int linear_path_line_ = 0;
  std::vector<OverrideSite> override_sites_;
};

}  // namespace

Result<NetSpec> parse_net_text(std::string_view text, std::string_view file_name) {
  return Parser(file_name).parse(text);
}

Result<NetSpec> read_net_file(const std::filesystem::path& path) {
  std::error_code error;
  if (!std::filesystem::exists(path, error)) {
    return Status::invalid_input("net file " + path.string() + ": no such file; check the path");
  }
  if (std::filesystem::is_directory(path, error)) {
    return Status::invalid_input("net file " + path.string() +
                                 ": is a directory; give a net file (see nets/README.md)");
  }
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    return Status::io_error("reading net file " + path.string() +
                            ": cannot open it; check its permissions");
  }
  std::ostringstream bytes;
  bytes << in.rdbuf();
  if (in.bad()) return Status::io_error("reading net file " + path.string() + ": read failed");
  return parse_net_text(bytes.str(), path.string());
}

}  // namespace credence
