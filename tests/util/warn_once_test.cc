// warn_once: a warning text is logged the first time only, through credence's logger.
#include "util/warn_once.h"

#include <gtest/gtest.h>
#include <spdlog/sinks/ostream_sink.h>

#include <sstream>

#include "util/log.h"

namespace credence {
namespace {

std::size_t count(const std::string& text, const std::string& piece) {
  std::size_t n = 0;
  for (std::size_t at = text.find(piece); at != std::string::npos; at = text.find(piece, at + 1)) ++n;
  return n;
}

TEST(WarnOnce, RepeatedTextIsLoggedOnceAndOtherTextsStillAppear) {
  std::ostringstream out;
  auto logger = std::make_shared<spdlog::logger>(
      kLoggerName, std::make_shared<spdlog::sinks::ostream_sink_mt>(out));
  spdlog::drop(kLoggerName);
  spdlog::register_logger(logger);
  for (int i = 0; i < 3; ++i) warn_once("class 'rare' has only 3 rows");
  warn_once("the test rows hold no row of class 'rare'");
  warn_once("class 'rare' has only 3 rows");
  logger->flush();
  spdlog::drop(kLoggerName);
  EXPECT_EQ(count(out.str(), "class 'rare' has only 3 rows"), 1u) << out.str();
  EXPECT_EQ(count(out.str(), "the test rows hold no row of class 'rare'"), 1u) << out.str();
  EXPECT_EQ(count(out.str(), "warning"), 2u) << "logged as warnings: " << out.str();
}

}  // namespace
}  // namespace credence
