// JSON text for machine-readable output (--json): string escaping per RFC 8259.
#pragma once

#include <fmt/format.h>

#include <cmath>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace credence {

/// `text` as a quoted JSON string.
inline std::string json_string(std::string_view text) {
  std::string out = "\"";
  for (char c : text) {
    switch (c) {
      case '"': out += "\\\""; break;
      case '\\': out += "\\\\"; break;
      case '\n': out += "\\n"; break;
      case '\r': out += "\\r"; break;
      case '\t': out += "\\t"; break;
      default:
        if (static_cast<unsigned char>(c) < 0x20) {
          out += fmt::format("\\u{:04x}", static_cast<unsigned>(static_cast<unsigned char>(c)));
        } else {
          out += c;
        }
    }
  }
  return out + "\"";
}

/// A number as JSON; NaN and infinities (which JSON lacks) become null.
inline std::string json_number(double value) {
  return std::isfinite(value) ? fmt::format("{}", value) : "null";
}

}  // namespace credence

namespace credence {

/// Writes indented JSON text, placing commas itself:
///
///   JsonWriter j;
///   j.begin_object();
///   j.key("rows").value(450);
///   j.key("ece").begin_object().key("width").value(0.03).end_object();
///   j.end_object();
///   std::string text = j.str();
class JsonWriter {
 public:
  JsonWriter& begin_object() { return open('{'); }
  JsonWriter& end_object() { return close('}'); }
  JsonWriter& begin_array() { return open('['); }
  JsonWriter& end_array() { return close(']'); }
  JsonWriter& key(std::string_view name) {
    separate();
    out_ += json_string(name) + ": ";
    after_key_ = true;
    return *this;
  }
  JsonWriter& value(double v) { return raw(json_number(v)); }
  JsonWriter& value(std::int64_t v) { return raw(fmt::format("{}", v)); }
  JsonWriter& value(int v) { return raw(fmt::format("{}", v)); }
  JsonWriter& value(bool v) { return raw(v ? "true" : "false"); }
  JsonWriter& value(std::string_view v) { return raw(json_string(v)); }
  JsonWriter& value(const char* v) { return raw(json_string(v)); }
  JsonWriter& null() { return raw("null"); }
  /// A number, or null when empty.
  template <typename T>
  JsonWriter& value_or_null(const std::optional<T>& v) {
    return v ? value(*v) : null();
  }
  /// An array of numbers on one line.
  template <typename Range>
  JsonWriter& numbers(const Range& values) {
    std::string text = "[";
    bool first = true;
    for (const auto& v : values) {
      text += first ? "" : ", ";
      text += json_number(static_cast<double>(v));
      first = false;
    }
    return raw(text + "]");
  }
  std::string str() const { return out_ + "\n"; }

 private:
  void separate() {
    if (after_key_) return;
    if (!first_.empty()) {
      if (!first_.back()) out_ += ',';
      first_.back() = false;
      out_ += '\n' + std::string(2 * first_.size(), ' ');
    }
  }
  JsonWriter& raw(std::string_view text) {
    separate();
    after_key_ = false;
    out_ += text;
    return *this;
  }
  JsonWriter& open(char bracket) {
    separate();
    after_key_ = false;
    out_ += bracket;
    first_.push_back(true);
    return *this;
  }
  JsonWriter& close(char bracket) {
    const bool empty = first_.back();
    first_.pop_back();
    if (!empty) out_ += '\n' + std::string(2 * first_.size(), ' ');
    out_ += bracket;
    return *this;
  }

  std::string out_;
  std::vector<bool> first_;  // per open bracket: nothing written in it yet
  bool after_key_ = false;
};

}  // namespace credence
