// with_one_blas_thread (bindings.h): OpenBLAS's thread count is process-wide, shared with
// numpy when numpy uses the same OpenBLAS, so it is put back after each call.
#pragma once

#include <utility>

#ifdef CREDENCE_HAVE_BLAS
extern "C" void openblas_set_num_threads(int);
extern "C" int openblas_get_num_threads(void);
#endif

namespace credence::python {

/// Runs `work` with BLAS on one thread, as the CLI does for predict and assess (row
/// blocks run in parallel with OpenMP), restoring the caller's BLAS thread count after.
template <typename Work>
auto with_one_blas_thread(Work&& work) {
#ifdef CREDENCE_HAVE_BLAS
  struct Restore {
    int threads = openblas_get_num_threads();
    ~Restore() { openblas_set_num_threads(threads); }
  } restore;
  openblas_set_num_threads(1);
#endif
  return std::forward<Work>(work)();
}

}  // namespace credence::python
