// Issue 9: fuzzed run files crashed and hung HDF5 1.10 inside its global heap, where
// variable-length strings keep their text: H5HG_read indexes a collection's object table
// with a damaged reference's index unchecked (SEGV), and the collection parser loops
// forever on a free-space object of size 0. Run files (format version 2) now hold
// fixed-width strings only, and the reader refuses a variable-length one before HDF5
// follows its reference. The layout facts used here (the "GCOL" signature of a heap
// collection; a reference on disk as length 4 bytes, collection address 8, object index 4)
// are from the HDF5 file format specification; h5py makes and damages the file.
#include <gtest/gtest.h>

#include <string>

#include "credence/ensemble.h"
#include "ensemble/test_runs.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

std::string train_small_run(testing::TempDir& dir) {
  const std::string data = (dir.path() / "pumps.csv").string();
  const std::string run = (dir.path() / "run.h5").string();
  EXPECT_EQ(testing::run_credence("synth --scenario pump-wear --rows 200 --out '" + data + "'")
                .exit_code,
            0);
  auto train = testing::run_credence("--quiet train '" + data +
                                     "' --target condition --id pump_id --hidden 4 --chains 1 "
                                     "--burn-in 5 --samples 2 --out '" + run + "'");
  EXPECT_EQ(train.exit_code, 0) << train.output;
  return run;
}

TEST(Issue9RunStringHeap, RunFilesHoldNoGlobalHeap) {
  testing::TempDir dir;
  const std::string run = train_small_run(dir);
  ASSERT_TRUE(RunReader::open(run).ok()) << "the intact run must open";
  const std::string bytes = testing::read_text(run);
  EXPECT_EQ(bytes.find("GCOL"), std::string::npos)
      << "a global heap collection at byte " << bytes.find("GCOL");
}

// The fuzzer's crash, rebuilt: /preprocessing/class_names rewritten by h5py as
// variable-length strings (h5py's default for str), then the first reference's object
// index, in the dataset's raw data (no checksum covers it), set far past any collection's
// table. HDF5 1.10.8 reading it follows the index out of bounds.
TEST(Issue9RunStringHeap, DamagedVariableLengthReferenceIsRefusedUnread) {
  testing::TempDir dir;
  const std::string run = train_small_run(dir);
  const std::string script = dir.write("damage.py",
      "import h5py, sys\n"
      "with h5py.File(sys.argv[1], 'r+') as f:\n"
      "    g = f['preprocessing']\n"
      "    names = [n.decode() for n in g['class_names'][:]]\n"
      "    del g['class_names']\n"
      "    d = g.create_dataset('class_names', data=names, dtype=h5py.string_dtype())\n"
      "    offset = d.id.get_offset()\n"
      "with open(sys.argv[1], 'r+b') as raw:\n"
      "    raw.seek(offset + 12)\n"
      "    raw.write((0x00ffffff).to_bytes(4, 'little'))\n"
      "print(offset)\n");
  int code = 0;
  const std::string output = testing::run_python("'" + script + "' '" + run + "'", code);
  ASSERT_EQ(code, 0) << output;

  auto reader = RunReader::open(run);
  ASSERT_FALSE(reader.ok());
  EXPECT_EQ(reader.status().code(), StatusCode::kCorrupt);
  EXPECT_NE(reader.status().message().find("variable-length string"), std::string::npos)
      << reader.status().message();
  // credence's own check, so not worded as an error HDF5 reported.
  EXPECT_EQ(reader.status().message().find("HDF5 reported"), std::string::npos)
      << reader.status().message();
  EXPECT_NE(reader.status().message().find("use an intact copy or train the run again"),
            std::string::npos)
      << reader.status().message();
}

// The two inputs the first fuzz_run campaign kept (mutated version-1 run files): a SEGV in
// H5HG_read and a 104-byte leak inside HDF5. Both must be refused with a status.
TEST(Issue9RunStringHeap, KeptFuzzFindingsAreRefused) {
  for (const char* name : {"run-crash-8ae52fab", "run-leak-bef10a7d"}) {
    const std::string path = std::string(CREDENCE_SOURCE_DIR) + "/tests/regressions/inputs/" + name;
    auto reader = RunReader::open(path);
    ASSERT_FALSE(reader.ok()) << name;
    EXPECT_EQ(reader.status().code(), StatusCode::kCorrupt) << reader.status().to_string();
  }
}

}  // namespace
}  // namespace credence
