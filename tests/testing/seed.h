// Fixed, printed seeds for stochastic tests (STYLE.md rule 23).
#pragma once

#include <cstdint>

namespace credence::testing {

/// Returns `literal`, or the value of the environment variable CREDENCE_TEST_SEED
/// when it is set, and prints which one the test uses so a failure can be replayed.
std::uint64_t test_seed(std::uint64_t literal);

}  // namespace credence::testing
