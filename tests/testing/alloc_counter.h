// Counts heap allocations in a test executable: replaces malloc, calloc, realloc and
// posix_memalign (and so operator new, which ends in malloc) with counting wrappers
// around glibc's __libc_* entry points. Include it from exactly one file per test
// executable. Calls made from inside OpenBLAS are counted apart: OpenBLAS 0.3.21's
// small-matrix sgemm kernels malloc a few hundred bytes per call, outside our control.
//
//   g_counting = true;  run_the_hot_loop();  g_counting = false;
//   EXPECT_EQ(g_mallocs.load(), 0);
#pragma once

#include <dlfcn.h>

#include <atomic>
#include <cerrno>
#include <cstddef>
#include <cstring>

namespace {
std::atomic<long> g_mallocs{0};       // malloc family, called from anywhere but OpenBLAS
std::atomic<long> g_blas_mallocs{0};  // malloc family, called from inside OpenBLAS
std::atomic<bool> g_counting{false};  // count only while true

void count_malloc(void* caller) {
  if (!g_counting.load(std::memory_order_relaxed)) return;
  Dl_info info;
  if (dladdr(caller, &info) != 0 && info.dli_fname != nullptr &&
      std::strstr(info.dli_fname, "openblas") != nullptr) {
    ++g_blas_mallocs;
  } else {
    ++g_mallocs;
  }
}
}  // namespace

extern "C" {
void* __libc_malloc(std::size_t size);
void* __libc_calloc(std::size_t count, std::size_t size);
void* __libc_realloc(void* pointer, std::size_t size);
void* __libc_memalign(std::size_t alignment, std::size_t size);

// Eigen's aligned_malloc and OpenBLAS call malloc directly, so it is counted too.
void* malloc(std::size_t size) {
  count_malloc(__builtin_return_address(0));
  return __libc_malloc(size);
}
void* calloc(std::size_t count, std::size_t size) {
  count_malloc(__builtin_return_address(0));
  return __libc_calloc(count, size);
}
void* realloc(void* pointer, std::size_t size) {
  count_malloc(__builtin_return_address(0));
  return __libc_realloc(pointer, size);
}
int posix_memalign(void** out, std::size_t alignment, std::size_t size) {
  count_malloc(__builtin_return_address(0));
  *out = __libc_memalign(alignment, size);
  return *out == nullptr ? ENOMEM : 0;
}
}
