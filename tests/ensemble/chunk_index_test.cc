// Which chunk index HDF5 gives the run file's tables, and why it matters under kill -9.
//
// A table with one unlimited dimension gets an extensible-array chunk index, whose data
// blocks double in size as chunks accumulate: past about 8,000 chunks a block holds 512
// chunk addresses (4,118 bytes) and spans two 4 KiB pages, so kill -9 can leave it half
// rewritten and the table unreadable. A table with two unlimited dimensions gets a
// version-2 B-tree, whose nodes have one fixed size (2,048 bytes by default) and, with
// the run file's paged allocation, never cross a page. Layouts are from the HDF5 file
// format specification (version-2 B-tree header: "BTHD", version, type, then the node
// size as 4 bytes; nodes start "BTIN" or "BTLF"; extensible-array data blocks "EADB").
#include <gtest/gtest.h>

#include <cstdint>
#include <cstring>
#include <string>
#include <vector>

#include "credence/ensemble.h"
#include "ensemble/h5_util.h"
#include "ensemble/test_runs.h"
#include "testing/read_text.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

constexpr std::size_t kPageBytes = 4096;

std::vector<std::size_t> offsets_of(const std::string& bytes, const char* signature) {
  std::vector<std::size_t> found;
  for (std::size_t at = bytes.find(signature); at != std::string::npos;
       at = bytes.find(signature, at + 1)) {
    found.push_back(at);
  }
  return found;
}

TEST(ChunkIndex, EveryTwoDimensionalRunTableIsIndexedByAVersion2BTree) {
  testing::TempDir dir;
  const std::string path = (dir.path() / "run.h5").string();
  {
    RunHeader header = testing::make_header(2, 300);
    auto writer = RunWriter::create(path, header, false);
    ASSERT_TRUE(writer.ok()) << writer.status().to_string();
    for (int chain = 0; chain < 2; ++chain) {
      ASSERT_TRUE(testing::append_rows(**writer, chain, 0).ok());
    }
    ASSERT_TRUE((*writer)->commit().ok());
    ASSERT_TRUE((*writer)->finish(RunStatus::kComplete).ok());
  }
  h5::silence_errors();
  H5::H5File file(path, H5F_ACC_RDONLY);
  H5::Group samples = file.openGroup("samples");
  int wide_tables = 0;
  for (hsize_t i = 0; i < samples.getNumObjs(); ++i) {
    const std::string name = samples.getObjnameByIdx(i);
    H5::DataSet set = samples.openDataSet(name);
    H5D_chunk_index_t index{};
    ASSERT_GE(H5Dget_chunk_index_type(set.getId(), &index), 0) << name;
    if (set.getSpace().getSimpleExtentNdims() == 2) {
      ++wide_tables;
      EXPECT_EQ(index, H5D_CHUNK_IDX_BT2) << "samples/" << name;
    }
  }
  EXPECT_GE(wide_tables, 4) << "theta, probe_prob, projections, layer_sq_norms";
}

// 9,000 one-row chunks in a paged file, as the writer makes it: past the point where an
// extensible array's data blocks outgrow a page (the index_type assertion is the cause;
// the node scan is the property kill -9 needs).
TEST(ChunkIndex, NineThousandChunksKeepEveryIndexNodeInsideOnePage) {
  testing::TempDir dir;
  const std::string path = (dir.path() / "wide.h5").string();
  constexpr std::int64_t kRows = 9000;
  constexpr std::int64_t kRowsPerWrite = 500;
  {
    h5::silence_errors();
    H5::FileCreatPropList creation;
    ASSERT_GE(H5Pset_file_space_strategy(creation.getId(), H5F_FSPACE_STRATEGY_PAGE, 0, 1), 0);
    ASSERT_GE(H5Pset_file_space_page_size(creation.getId(), kPageBytes), 0);
    H5::FileAccPropList access;
    access.setLibverBounds(H5F_LIBVER_LATEST, H5F_LIBVER_LATEST);
    H5::H5File file(path, H5F_ACC_TRUNC, creation, access);
    H5::Group group = file.createGroup("t");
    H5::DataSet set = h5::create_table(group, "wide", h5::Type<float>::file(), 2, 1);
    std::vector<float> rows(2 * kRowsPerWrite, 0.25f);
    for (std::int64_t first = 0; first < kRows; first += kRowsPerWrite) {
      h5::set_table_rows(set, first + kRowsPerWrite);
      h5::write_rows(set, first, kRowsPerWrite, rows.data(), h5::Type<float>::mem());
      file.flush(H5F_SCOPE_GLOBAL);
    }
    H5D_chunk_index_t index{};
    ASSERT_GE(H5Dget_chunk_index_type(set.getId(), &index), 0);
    EXPECT_EQ(index, H5D_CHUNK_IDX_BT2);
  }
  const std::string bytes = testing::read_text(path);
  EXPECT_TRUE(offsets_of(bytes, "EADB").empty()) << "extensible-array data blocks";
  const std::vector<std::size_t> headers = offsets_of(bytes, "BTHD");
  ASSERT_EQ(headers.size(), 1u);
  std::uint32_t node_bytes = 0;
  std::memcpy(&node_bytes, bytes.data() + headers[0] + 6, sizeof node_bytes);  // little-endian
  EXPECT_EQ(node_bytes, 2048u) << "HDF5's default node size for chunk indexes";
  std::size_t nodes = 0;
  for (const char* signature : {"BTIN", "BTLF"}) {
    for (std::size_t at : offsets_of(bytes, signature)) {
      ++nodes;
      EXPECT_LE(at % kPageBytes + node_bytes, kPageBytes) << signature << " at byte " << at;
    }
  }
  EXPECT_GT(nodes, 10u) << "9,000 chunks need many leaves";
}

}  // namespace
}  // namespace credence
