// The bounded read driver through HDF5's public driver calls (H5FDopen, H5FDread), on a
// plain file of known bytes: reads inside the file return those bytes, a read may reach
// kReadSlackBytes past the end (zeros there) and not one byte further, the file is
// never written, and bytes appended after the open are readable (a live writer grows
// the file under a SWMR reader).
#include "ensemble/bounded_read_driver.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cstdint>
#include <fstream>
#include <limits>
#include <string>
#include <vector>

#include "ensemble/h5_util.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

constexpr std::size_t kFileBytes = 10'000;
constexpr haddr_t kMaxAddress = static_cast<haddr_t>(std::numeric_limits<std::int64_t>::max());

std::string pattern(std::size_t size, unsigned salt) {
  std::string bytes(size, '\0');
  for (std::size_t i = 0; i < size; ++i) bytes[i] = static_cast<char>((i * 131 + salt) % 251);
  return bytes;
}

class BoundedReadDriver : public ::testing::Test {
 protected:
  void SetUp() override {
    h5::silence_errors();
    path_ = dir_.write("plain.bin", pattern(kFileBytes, 7));
    fapl_ = H5Pcreate(H5P_FILE_ACCESS);
    ASSERT_GE(h5::use_bounded_read_driver(fapl_), 0);
  }
  void TearDown() override {
    if (file_ != nullptr) H5FDclose(file_);
    H5Pclose(fapl_);
  }
  // As the reader opens a killed writer's file: read-only, SWMR read (HDF5 then skips
  // its own end-of-allocation check, so only the driver bounds a read).
  void open() {
    file_ = H5FDopen(path_.c_str(), H5F_ACC_RDONLY | H5F_ACC_SWMR_READ, fapl_, kMaxAddress);
    ASSERT_NE(file_, nullptr);
  }
  herr_t read(haddr_t address, std::vector<char>& out) {
    return H5FDread(file_, H5FD_MEM_DRAW, H5P_DEFAULT, address, out.size(), out.data());
  }

  testing::TempDir dir_;
  std::string path_;
  hid_t fapl_ = -1;
  H5FD_t* file_ = nullptr;
};

TEST_F(BoundedReadDriver, ReadsTheFileBytes) {
  open();
  EXPECT_EQ(H5FDget_eof(file_, H5FD_MEM_DEFAULT), kFileBytes);
  std::vector<char> out(4000);
  ASSERT_GE(read(3000, out), 0);
  EXPECT_EQ(std::string(out.begin(), out.end()), pattern(kFileBytes, 7).substr(3000, 4000));
}

TEST_F(BoundedReadDriver, ReadsZerosUpToTheSlackPastTheEnd) {
  open();
  std::vector<char> out(kFileBytes - 100 + h5::kReadSlackBytes, 'x');
  ASSERT_GE(read(100, out), 0) << "a read ending exactly at the slack is allowed";
  EXPECT_EQ(std::string(out.begin(), out.begin() + kFileBytes - 100),
            pattern(kFileBytes, 7).substr(100));
  EXPECT_EQ(std::count(out.begin() + kFileBytes - 100, out.end(), '\0'),
            static_cast<std::ptrdiff_t>(h5::kReadSlackBytes));
}

TEST_F(BoundedReadDriver, RefusesOneByteBeyondTheSlack) {
  open();
  std::vector<char> out(kFileBytes - 100 + h5::kReadSlackBytes + 1, 'x');
  EXPECT_LT(read(100, out), 0);
  EXPECT_EQ(std::count(out.begin(), out.end(), 'x'), static_cast<std::ptrdiff_t>(out.size()))
      << "a refused read must not touch the buffer";
  std::vector<char> small(16, 'x');
  EXPECT_LT(read(kFileBytes + h5::kReadSlackBytes, small), 0) << "a read starting past the slack";
}

TEST_F(BoundedReadDriver, RefusesTheFuzzersOversizedChunk) {
  // The length and address a fuzzed version-1 continuation message gave (1.5 GiB at byte
  // 16777215 of a 9663-byte file); the read is refused before the buffer is touched, so a
  // one-byte buffer is safe here only because the driver checks first.
  open();
  char one = 'x';
  const std::size_t claimed = (std::size_t{1} << 30) + (std::size_t{1} << 29);
  EXPECT_LT(H5FDread(file_, H5FD_MEM_OHDR, H5P_DEFAULT, 16'777'215, claimed, &one), 0);
  EXPECT_EQ(one, 'x');
}

TEST_F(BoundedReadDriver, SeesBytesAppendedAfterTheOpen) {
  open();
  {
    std::ofstream grow(path_, std::ios::binary | std::ios::app);
    grow << pattern(3 * h5::kReadSlackBytes, 11);
  }
  EXPECT_EQ(H5FDget_eof(file_, H5FD_MEM_DEFAULT), kFileBytes + 3 * h5::kReadSlackBytes);
  std::vector<char> out(100);
  ASSERT_GE(read(kFileBytes + 2 * h5::kReadSlackBytes, out), 0);
  EXPECT_EQ(std::string(out.begin(), out.end()),
            pattern(3 * h5::kReadSlackBytes, 11).substr(2 * h5::kReadSlackBytes, 100));
}

TEST_F(BoundedReadDriver, NeverWrites) {
  EXPECT_EQ(H5FDopen(path_.c_str(), H5F_ACC_RDWR, fapl_, kMaxAddress), nullptr);
  open();
  // HDF5 checks a write against the end of allocated space before the driver sees it.
  ASSERT_GE(H5FDset_eoa(file_, H5FD_MEM_DRAW, kFileBytes), 0);
  const std::string bytes = "overwrite";
  EXPECT_LT(H5FDwrite(file_, H5FD_MEM_DRAW, H5P_DEFAULT, 0, bytes.size(), bytes.data()), 0);
  std::vector<char> out(bytes.size());
  ASSERT_GE(read(0, out), 0);
  EXPECT_EQ(std::string(out.begin(), out.end()), pattern(kFileBytes, 7).substr(0, bytes.size()));
}

}  // namespace
}  // namespace credence
