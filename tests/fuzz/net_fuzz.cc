// libFuzzer target: the net file parser (parse_net_text) on arbitrary text.
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "credence/net.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  credence::Result<credence::NetSpec> spec = credence::parse_net_text(text, "fuzz.net");
  if (!spec.ok()) return 0;
  // An accepted spec is valid and survives formatting and parsing back unchanged
  // (net.h: format_net_spec's contract).
  if (!credence::validate_net_spec(*spec).ok()) __builtin_trap();
  const std::string canonical = credence::format_net_spec(*spec);
  credence::Result<credence::NetSpec> again = credence::parse_net_text(canonical, "canonical.net");
  if (!again.ok() || !(*again == *spec)) __builtin_trap();
  return 0;
}
