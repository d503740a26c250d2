// CsvChunkReader: a file read in pieces gives the same rows, cells and line numbers as
// read_table on the whole file (RFC 4180 records: quoted line breaks, doubled quotes,
// CRLF, blank lines), and errors in a later piece name the file's own line.
#include <gtest/gtest.h>

#include "credence/data.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

// Every cell of a table as text, row by row, with the row's line.
std::vector<std::string> cells(const Table& t) {
  std::vector<std::string> out;
  for (std::int64_t r = 0; r < t.rows(); ++r) {
    std::string row = std::to_string(t.row_lines[static_cast<std::size_t>(r)]) + ":";
    for (const TableColumn& c : t.columns) {
      if (c.is_text) {
        const std::int32_t code = c.codes[static_cast<std::size_t>(r)];
        row += "|" + (code < 0 ? std::string("<NA>") : c.levels[static_cast<std::size_t>(code)]);
      } else {
        row += "|" + std::to_string(c.numbers[static_cast<std::size_t>(r)]);
      }
    }
    out.push_back(row);
  }
  return out;
}

std::vector<std::string> chunked_cells(const std::string& path, const ReadOptions& read,
                                       std::int64_t chunk_bytes, int& pieces) {
  Result<CsvChunkReader> reader = CsvChunkReader::open(path, read, chunk_bytes);
  EXPECT_TRUE(reader.ok()) << reader.status().to_string();
  std::vector<std::string> out;
  pieces = 0;
  Table piece;
  for (bool got = true;;) {
    Status s = reader->next(piece, got);
    EXPECT_TRUE(s.ok()) << s.to_string();
    if (!s.ok() || !got) break;
    ++pieces;
    for (std::string& row : cells(piece)) out.push_back(std::move(row));
  }
  return out;
}

TEST(CsvChunkReader, PiecesJoinToTheWholeFile) {
  testing::TempDir dir;
  // Source of the format: RFC 4180 (quoted line breaks and doubled quotes), with a
  // blank line and CRLF line ends mixed in.
  const std::string text =
      "id,note,x\r\n"
      "a1,\"two\nlines\",1.5\r\n"
      "a2,plain,2\n"
      "\n"
      "a3,\"say \"\"hi\"\"\",3\n"
      "a4,\"x,y\",\n"
      "a5,last,5";
  const std::string path = dir.write("t.csv", text);
  ReadOptions read;
  read.text_columns = {"id", "note"};
  Result<Table> whole = read_table(path, read);
  ASSERT_TRUE(whole.ok()) << whole.status().to_string();
  const std::vector<std::string> expected = cells(*whole);
  ASSERT_EQ(expected.size(), 5u);
  for (std::int64_t chunk : {1, 5, 13, 20, 1000}) {
    int pieces = 0;
    EXPECT_EQ(chunked_cells(path, read, chunk, pieces), expected) << "chunk " << chunk;
    if (chunk == 1) {
      EXPECT_EQ(pieces, 5);
    }
    if (chunk == 1000) {
      EXPECT_EQ(pieces, 1);
    }
  }
}

TEST(CsvChunkReader, ErrorInALaterPieceNamesTheFilesLine) {
  testing::TempDir dir;
  std::string text = "a,b\n";
  for (int i = 0; i < 50; ++i) text += std::to_string(i) + "," + std::to_string(i) + "\n";
  text += "7\n";  // line 52: one field short
  const std::string path = dir.write("ragged.csv", text);
  Result<CsvChunkReader> reader = CsvChunkReader::open(path, ReadOptions{}, 16);
  ASSERT_TRUE(reader.ok());
  Table piece;
  Status status;
  for (bool got = true; status.ok() && got;) status = reader->next(piece, got);
  ASSERT_FALSE(status.ok());
  EXPECT_NE(status.message().find("ragged.csv:52:"), std::string::npos) << status.message();
}

TEST(CsvChunkReader, HeaderOnlyAndEmptyFilesAreRefusedAsByReadTable) {
  testing::TempDir dir;
  Result<CsvChunkReader> header_only = CsvChunkReader::open(dir.write("h.csv", "a,b\n\n"), {}, 8);
  ASSERT_FALSE(header_only.ok());
  EXPECT_EQ(header_only.status().code(), StatusCode::kInvalidInput);
  Result<CsvChunkReader> empty = CsvChunkReader::open(dir.write("e.csv", ""), {}, 8);
  ASSERT_FALSE(empty.ok());
  EXPECT_NE(empty.status().message().find("empty"), std::string::npos)
      << empty.status().message();
  Result<CsvChunkReader> missing = CsvChunkReader::open((dir.path() / "none.csv").string(), {}, 8);
  EXPECT_FALSE(missing.ok());
}

}  // namespace
}  // namespace credence
