// A read-only HDF5 file driver whose reads stop near the end of the file on disk.
//
// A SWMR-read open (how the reader opens a file whose writer was killed or is still
// running) lets HDF5 read past the end of allocated space, and the library's own POSIX
// driver fills such a read with zeros. HDF5 1.10 sizes some metadata reads from lengths
// no checksum covers (a version-1 object header's continuation message, say), so a
// damaged 10 KB file can ask for gigabytes and have them zero-filled: 15.7 GB of memory
// and 85 s for one such file. This driver refuses any read that reaches more than
// kReadSlackBytes past the end of the file instead.
#pragma once

#include <hdf5.h>

#include <cstddef>

namespace credence::h5 {

/// How far past the end of the file a read may reach; the gap reads as zeros. A killed
/// writer leaves its last page-aligned allocation partly unwritten (by up to one 4 KiB
/// page), and metadata HDF5 reads there must still decode or fail its checksum.
inline constexpr std::size_t kReadSlackBytes = std::size_t{1} << 20;

/// Makes `fapl` open files read-only through the bounded driver (it supports SWMR reads).
/// Returns a negative value when HDF5 refuses to register or set the driver.
herr_t use_bounded_read_driver(hid_t fapl);

}  // namespace credence::h5
