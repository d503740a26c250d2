// Issue 9: a binary net file echoed its raw bytes into the error message; the offending
// token is now shown escaped and cut to 40 bytes, with the place and what was expected.
#include <gtest/gtest.h>

#include <string>

#include "credence/net.h"

namespace credence {
namespace {

TEST(Issue9NetBinaryToken, NonPrintableBytesAreEscaped) {
  const std::string text = std::string("\x01\xFFhello") + '\0' + "x\n";
  Result<NetSpec> spec = parse_net_text(text, "junk.net");
  ASSERT_FALSE(spec.ok());
  const std::string m = spec.status().message();
  // Expected text written by hand from the bytes above.
  EXPECT_EQ(m.rfind("junk.net:1:1: found '\\x01\\xffhello\\x00x', expected", 0), 0u) << m;
  for (char c : m) EXPECT_TRUE(c >= 0x20 && c < 0x7F) << m;
}

TEST(Issue9NetBinaryToken, LongTokensAreCut) {
  const std::string text = std::string(500, 'z') + "\n";
  Result<NetSpec> spec = parse_net_text(text, "long.net");
  ASSERT_FALSE(spec.ok());
  EXPECT_NE(spec.status().message().find("found '" + std::string(40, 'z') + "...'"),
            std::string::npos)
      << spec.status().message();
  EXPECT_LT(spec.status().message().size(), 200u);
}

}  // namespace
}  // namespace credence
