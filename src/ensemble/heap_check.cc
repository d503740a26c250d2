// Global heap pre-check: stream the file, find each collection, walk its objects.
#include "ensemble/heap_check.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cstdint>
#include <cstring>
#include <vector>

namespace credence::run_file {
namespace {

// Layout (HDF5 file format specification, global heap collection), for files with 8-byte
// lengths as every HDF5 1.8+ default and every run file has:
//   "GCOL" | version (1) | 3 reserved | collection size (8) | objects...
// Each object: index (2) | reference count (2) | reserved (4) | size (8) | data, padded to
// a multiple of 8. Index 0 is the free space at the end; its size counts the whole rest
// of the collection, header included.
constexpr char kSignature[4] = {'G', 'C', 'O', 'L'};
constexpr std::uint64_t kHeaderBytes = 16;
constexpr std::uint64_t kObjectHeaderBytes = 16;
constexpr std::uint64_t kMinimumCollection = 4096;
// Run files keep short strings (net text, settings, messages); a larger "collection" is
// sample data that happens to spell the signature, or damage HDF5 reports itself.
constexpr std::uint64_t kLargestCollection = std::uint64_t{64} << 20;

std::uint64_t little_u64(const unsigned char* p) {
  std::uint64_t v = 0;
  for (int i = 7; i >= 0; --i) v = (v << 8) | p[i];
  return v;
}
std::uint16_t little_u16(const unsigned char* p) {
  return static_cast<std::uint16_t>(p[0] | (p[1] << 8));
}

// Walks the collection at the start of `c` (the collection's bytes). Returns false when
// the object list cannot be walked to its end.
bool walkable(const unsigned char* c, std::uint64_t size) {
  std::uint64_t at = kHeaderBytes;
  while (at < size) {
    if (size - at < kObjectHeaderBytes) return true;  // a tail too small for a header
    const std::uint16_t index = little_u16(c + at);
    const std::uint64_t object = little_u64(c + at + 8);
    if (index == 0) return object >= kObjectHeaderBytes && object <= size - at;
    const std::uint64_t padded = (object + 7) / 8 * 8;
    if (object > size || padded > size - at - kObjectHeaderBytes) return false;
    at += kObjectHeaderBytes + padded;
  }
  return true;
}

}  // namespace

Status check_global_heaps(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return Status::ok_status();  // the HDF5 open that follows reports it
  struct Closer {
    int fd;
    ~Closer() { ::close(fd); }
  } closer{fd};
  struct stat info {};
  if (::fstat(fd, &info) != 0) return Status::ok_status();
  const auto n = static_cast<std::uint64_t>(info.st_size);
  // Stream in pieces that overlap by a header, so no signature straddles two unseen.
  constexpr std::uint64_t kPiece = std::uint64_t{1} << 20;
  std::vector<unsigned char> piece(kPiece + kHeaderBytes);
  std::vector<unsigned char> collection;
  for (std::uint64_t start = 0; start < n; start += kPiece) {
    const std::uint64_t want = std::min<std::uint64_t>(kPiece + kHeaderBytes, n - start);
    if (::pread(fd, piece.data(), want, static_cast<off_t>(start)) != static_cast<ssize_t>(want)) {
      return Status::ok_status();  // a short read: HDF5's own checks report the file
    }
    const std::uint64_t last = std::min<std::uint64_t>(kPiece, want);
    for (std::uint64_t i = 0; i < last && i + kHeaderBytes <= want; ++i) {
      const void* found = std::memchr(piece.data() + i, 'G', last - i);
      if (found == nullptr) break;
      i = static_cast<std::uint64_t>(static_cast<const unsigned char*>(found) - piece.data());
      if (i + kHeaderBytes > want) break;
      const unsigned char* c = piece.data() + i;
      const std::uint64_t at = start + i;
      const std::uint64_t size = little_u64(c + 8);
      const bool plausible = std::memcmp(c, kSignature, 4) == 0 && c[4] == 1 && c[5] == 0 &&
                             c[6] == 0 && c[7] == 0 && size >= kMinimumCollection &&
                             size <= n - at && size <= kLargestCollection;
      if (!plausible) continue;
      collection.resize(size);
      if (::pread(fd, collection.data(), size, static_cast<off_t>(at)) !=
          static_cast<ssize_t>(size)) {
        return Status::ok_status();
      }
      if (!walkable(collection.data(), size)) {
        return Status::corrupt(
            "reading run file " + path +
            ": the file is damaged (the variable-length string heap at byte " +
            std::to_string(at) +
            " lists an object that does not fit); use an intact copy or train the run again");
      }
    }
  }
  return Status::ok_status();
}

}  // namespace credence::run_file
