// JSON text for machine-readable output (--json): string escaping per RFC 8259.
#pragma once

#include <fmt/format.h>

#include <cmath>
#include <string>
#include <string_view>

namespace credence::cli {

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

}  // namespace credence::cli
