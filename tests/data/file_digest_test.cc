// SHA-256: the FIPS 180-2 example digests, and agreement with Python's hashlib on files
// around the padding boundaries.
#include <gtest/gtest.h>

#include <cstdio>
#include <fstream>
#include <sstream>
#include <string>

#include "credence/data.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

TEST(FileDigest, FipsExampleMessages) {
  // FIPS 180-2, appendix B.1 and B.2 (one-block and two-block messages), and the digest of
  // the empty message (widely published; also what hashlib.sha256(b"") gives).
  EXPECT_EQ(sha256_hex("abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  EXPECT_EQ(sha256_hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  EXPECT_EQ(sha256_hex(""), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

std::string run(const std::string& command) {
  std::string out;
  FILE* pipe = popen(command.c_str(), "r");
  if (pipe == nullptr) return out;
  char buffer[256];
  while (std::fgets(buffer, sizeof buffer, pipe)) out += buffer;
  pclose(pipe);
  while (!out.empty() && (out.back() == '\n' || out.back() == '\r')) out.pop_back();
  return out;
}

TEST(FileDigest, MatchesPythonHashlibOnFiles) {
  testing::TempDir dir;
  for (std::size_t size : {0u, 1u, 55u, 56u, 63u, 64u, 65u, 119u, 120u, 1000u, 200003u}) {
    std::string bytes;
    for (std::size_t i = 0; i < size; ++i) bytes.push_back(static_cast<char>((i * 131 + 7) % 256));
    const std::string path = dir.write(std::to_string(size) + ".bin", bytes);
    Result<std::string> ours = file_sha256_hex(path);
    ASSERT_TRUE(ours.ok()) << ours.status().to_string();
    // Reference: Python's hashlib (Debian's python3).
    const std::string reference = run(std::string("'") + CREDENCE_PYTHON +
                                      "' -c 'import hashlib,sys; print(hashlib.sha256(open(sys.argv[1],"
                                      "\"rb\").read()).hexdigest())' '" + path + "'");
    EXPECT_EQ(*ours, reference) << "size " << size;
    EXPECT_EQ(sha256_hex(bytes), reference) << "size " << size;
  }
}

TEST(FileDigest, UnreadableFileIsAnIoError) {
  Result<std::string> digest = file_sha256_hex("/nonexistent/file.csv");
  ASSERT_FALSE(digest.ok());
  EXPECT_EQ(digest.status().code(), StatusCode::kIoError);
  EXPECT_NE(digest.status().message().find("/nonexistent/file.csv"), std::string::npos);
}

}  // namespace
}  // namespace credence
