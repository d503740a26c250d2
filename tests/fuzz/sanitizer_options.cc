// AddressSanitizer defaults for every fuzz target, so a replay of a saved input behaves
// as the campaign did without extra environment.
//
// HDF5 1.10 allocates the length a damaged header claims before it reads anything, and
// a failed allocation is an ordinary error it reports (glibc's malloc returns null for
// an impossible size; credence then refuses the file). AddressSanitizer aborts on such a
// request instead (above 1 TiB), and libFuzzer reports any allocation over its RSS limit
// (2560 MiB in scripts/test) as out-of-memory. So C allocations over 1 GiB return null
// here, as they may in a real process; C++ `new` over the limit is still reported, since
// credence's own code must never ask for that much on a fuzz input of kilobytes.
extern "C" const char* __asan_default_options() {
  return "allocator_may_return_null=1:max_allocation_size_mb=1024";
}
