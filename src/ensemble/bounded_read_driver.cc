// The bounded read driver: POSIX pread on a read-only descriptor, as HDF5's own POSIX
// driver reads, except that a read reaching past the end of the file by more than the
// slack fails before any byte is touched. The callbacks follow H5FD_class_t of HDF5
// 1.10 (H5FDpublic.h); callbacks left null take HDF5's defaults (no locking, no
// driver-specific properties, allocation by moving the end of allocated space).
#include "ensemble/bounded_read_driver.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <limits>
#include <new>

namespace credence::h5 {
namespace {

// The largest address a 64-bit off_t can reach, as the POSIX driver allows.
constexpr haddr_t kMaxAddress = static_cast<haddr_t>(std::numeric_limits<off_t>::max());
// pread moves at most this much at once on Linux; larger reads loop.
constexpr std::size_t kMaxReadChunk = std::size_t{1} << 30;

struct BoundedFile {
  H5FD_t pub;  // first: HDF5 hands callbacks a pointer to this member
  int fd = -1;
  haddr_t eoa = 0;
  dev_t device = 0;
  ino_t inode = 0;
};

BoundedFile* bounded(H5FD_t* file) { return reinterpret_cast<BoundedFile*>(file); }
const BoundedFile* bounded(const H5FD_t* file) {
  return reinterpret_cast<const BoundedFile*>(file);
}

// The file's current size: a live writer may still be growing it.
bool end_of_file(int fd, haddr_t& end) {
  struct stat info {};
  if (fstat(fd, &info) != 0) return false;
  end = static_cast<haddr_t>(info.st_size);
  return true;
}

H5FD_t* open_file(const char* name, unsigned flags, hid_t /*fapl*/, haddr_t maxaddr) {
  const unsigned writing = H5F_ACC_RDWR | H5F_ACC_TRUNC | H5F_ACC_CREAT | H5F_ACC_EXCL;
  if (name == nullptr || (flags & writing) != 0) return nullptr;
  if (maxaddr == 0 || maxaddr == HADDR_UNDEF || maxaddr > kMaxAddress) return nullptr;
  const int fd = ::open(name, O_RDONLY | O_CLOEXEC);
  if (fd < 0) return nullptr;
  struct stat info {};
  if (fstat(fd, &info) != 0) {
    ::close(fd);
    return nullptr;
  }
  // No exception may cross HDF5's C frames: a failed allocation is a failed open.
  auto* file = new (std::nothrow) BoundedFile{};
  if (file == nullptr) {
    ::close(fd);
    return nullptr;
  }
  file->fd = fd;
  file->device = info.st_dev;
  file->inode = info.st_ino;
  return &file->pub;
}

herr_t close_file(H5FD_t* handle) {
  BoundedFile* file = bounded(handle);
  const int status = ::close(file->fd);
  delete file;
  return status == 0 ? 0 : -1;
}

int compare_files(const H5FD_t* a, const H5FD_t* b) {
  const BoundedFile* x = bounded(a);
  const BoundedFile* y = bounded(b);
  if (x->device != y->device) return x->device < y->device ? -1 : 1;
  if (x->inode != y->inode) return x->inode < y->inode ? -1 : 1;
  return 0;
}

herr_t query_features(const H5FD_t* /*file*/, unsigned long* flags) {
  // The POSIX driver's features, so HDF5 buffers and reads exactly as it does there.
  if (flags != nullptr) {
    *flags = H5FD_FEAT_AGGREGATE_METADATA | H5FD_FEAT_ACCUMULATE_METADATA | H5FD_FEAT_DATA_SIEVE |
             H5FD_FEAT_AGGREGATE_SMALLDATA | H5FD_FEAT_POSIX_COMPAT_HANDLE |
             H5FD_FEAT_SUPPORTS_SWMR_IO | H5FD_FEAT_DEFAULT_VFD_COMPATIBLE;
  }
  return 0;
}

haddr_t get_eoa(const H5FD_t* file, H5FD_mem_t /*type*/) { return bounded(file)->eoa; }

herr_t set_eoa(H5FD_t* file, H5FD_mem_t /*type*/, haddr_t address) {
  if (address > kMaxAddress) return -1;
  bounded(file)->eoa = address;
  return 0;
}

haddr_t get_eof(const H5FD_t* file, H5FD_mem_t /*type*/) {
  haddr_t end = 0;
  return end_of_file(bounded(file)->fd, end) ? end : HADDR_UNDEF;
}

herr_t get_handle(H5FD_t* file, hid_t /*fapl*/, void** handle) {
  if (handle == nullptr) return -1;
  *handle = &bounded(file)->fd;
  return 0;
}

herr_t read_bytes(H5FD_t* handle, H5FD_mem_t /*type*/, hid_t /*dxpl*/, haddr_t address,
                  std::size_t size, void* buffer) {
  const BoundedFile* file = bounded(handle);
  if (address == HADDR_UNDEF || address > kMaxAddress || size > kMaxAddress - address) {
    return -1;
  }
  haddr_t end = 0;
  if (!end_of_file(file->fd, end)) return -1;
  if (address + size > end + kReadSlackBytes) return -1;
  auto* out = static_cast<unsigned char*>(buffer);
  auto offset = static_cast<off_t>(address);
  while (size > 0) {
    const ssize_t got = ::pread(file->fd, out, std::min(size, kMaxReadChunk), offset);
    if (got < 0) {
      if (errno == EINTR) continue;
      return -1;
    }
    if (got == 0) {  // past the end of the file, within the slack
      std::memset(out, 0, size);
      break;
    }
    out += got;
    offset += got;
    size -= static_cast<std::size_t>(got);
  }
  return 0;
}

herr_t refuse_write(H5FD_t* /*file*/, H5FD_mem_t /*type*/, hid_t /*dxpl*/, haddr_t /*address*/,
                    std::size_t /*size*/, const void* /*buffer*/) {
  return -1;
}

// Every field in declaration order (H5FDpublic.h); null ones take HDF5's defaults.
const H5FD_class_t kBoundedClass = {
    .name = "credence_bounded_read",
    .maxaddr = kMaxAddress,
    .fc_degree = H5F_CLOSE_WEAK,
    .terminate = nullptr,
    .sb_size = nullptr,
    .sb_encode = nullptr,
    .sb_decode = nullptr,
    .fapl_size = 0,
    .fapl_get = nullptr,
    .fapl_copy = nullptr,
    .fapl_free = nullptr,
    .dxpl_size = 0,
    .dxpl_copy = nullptr,
    .dxpl_free = nullptr,
    .open = open_file,
    .close = close_file,
    .cmp = compare_files,
    .query = query_features,
    .get_type_map = nullptr,
    .alloc = nullptr,
    .free = nullptr,
    .get_eoa = get_eoa,
    .set_eoa = set_eoa,
    .get_eof = get_eof,
    .get_handle = get_handle,
    .read = read_bytes,
    .write = refuse_write,
    .flush = nullptr,
    .truncate = nullptr,
    .lock = nullptr,
    .unlock = nullptr,
    .fl_map = H5FD_FLMAP_DICHOTOMY,
};

}  // namespace

herr_t use_bounded_read_driver(hid_t fapl) {
  // Registered once per process; HDF5 keeps a pointer to the class.
  static const hid_t driver = H5FDregister(&kBoundedClass);
  if (driver < 0) return -1;
  return H5Pset_driver(fapl, driver, nullptr);
}

}  // namespace credence::h5
