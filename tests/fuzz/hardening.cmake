# Hardening builds: CREDENCE_SANITIZE (AddressSanitizer + UndefinedBehaviorSanitizer over
# every target) and CREDENCE_FUZZ (the libFuzzer targets in tests/fuzz, clang only).
# Included from the top-level CMakeLists.txt right after the option() block, or injected
# with -DCMAKE_PROJECT_credence_INCLUDE=<this file> (scripts/test does that while the
# top-level include is absent); the guard makes both at once harmless.
include_guard(GLOBAL)

option(CREDENCE_SANITIZE "Build everything with -fsanitize=address,undefined" OFF)
option(CREDENCE_FUZZ "Build the libFuzzer targets in tests/fuzz (clang only)" OFF)

if(CREDENCE_SANITIZE OR CREDENCE_FUZZ)
  # UB aborts instead of printing and carrying on, so a test or fuzz run fails on it.
  set(credence_sanitizers -fsanitize=address,undefined -fno-sanitize-recover=undefined
                          -fno-omit-frame-pointer)
  if(CREDENCE_FUZZ)
    if(NOT CMAKE_CXX_COMPILER_ID MATCHES "Clang")
      message(FATAL_ERROR "CREDENCE_FUZZ needs clang (libFuzzer): -DCMAKE_CXX_COMPILER=clang++-14")
    endif()
    # Coverage feedback for the whole library; the fuzz executables add the driver.
    list(APPEND credence_sanitizers -fsanitize=fuzzer-no-link)
  endif()
  add_compile_options(${credence_sanitizers})
  if(CMAKE_CXX_COMPILER_ID STREQUAL "GNU")
    # GCC 12's object-size warnings misfire on the instrumented code (fmt's fill_t copy
    # is reported as writing past a 4-byte array); they stay on in the normal build.
    add_compile_options(-Wno-stringop-overflow -Wno-array-bounds -Wno-stringop-overread)
  endif()
  add_link_options(-fsanitize=address,undefined)
endif()

if(CREDENCE_FUZZ)
  # The fuzz targets name the credence library, which the caller defines later.
  add_subdirectory(${PROJECT_SOURCE_DIR}/tests/fuzz ${PROJECT_BINARY_DIR}/tests/fuzz)
endif()
