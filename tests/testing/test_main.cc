// GoogleTest main for every credence test, plus the seed helper of seed.h.
#include <gtest/gtest.h>

#include <cstdio>
#include <cstdlib>
#include <string>

#include "testing/seed.h"

namespace credence::testing {

std::uint64_t test_seed(std::uint64_t literal) {
  std::uint64_t seed = literal;
  if (const char* text = std::getenv("CREDENCE_TEST_SEED")) seed = std::stoull(text);
  std::printf("[ seed     ] %llu%s\n", static_cast<unsigned long long>(seed),
              seed == literal ? "" : " (from CREDENCE_TEST_SEED)");
  return seed;
}

}  // namespace credence::testing

int main(int argc, char** argv) {
  testing::InitGoogleTest(&argc, argv);
  return RUN_ALL_TESTS();
}
