// Bad input through every command (DESIGN.md section 7): each malformed table, net file,
// run file or option value exits with code 2, one message naming the place (file:line:
// column, or the flag) and what to do, and no output file left behind. Data: an invented
// cold-store table from `credence synth`; the "HDF5 but not a run" file is written by h5py.
#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

namespace fs = std::filesystem;
using testing::run_credence;

struct BadInput {
  const char* name;
  std::string args;    // {d}: the temp folder; {out}: this case's output path
  const char* out;     // file name (or folder) the command was asked to write
  const char* place;   // the message names the place: file:line:column or the flag
  const char* advice;  // ... and says what to do
};

std::string read_file(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream bytes;
  bytes << in.rdbuf();
  return bytes.str();
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::stringstream stream(text);
  for (std::string line; std::getline(stream, line);) lines.push_back(line);
  return lines;
}

std::string join_lines(const std::vector<std::string>& lines) {
  std::string out;
  for (const std::string& line : lines) out += line + "\n";
  return out;
}

// Field `index` of a comma-separated line with no quoted fields (synth writes none).
std::string replace_field(const std::string& line, std::size_t index, const std::string& value) {
  std::vector<std::string> fields;
  std::stringstream stream(line);
  for (std::string field; std::getline(stream, field, ',');) fields.push_back(field);
  fields.at(index) = value;
  std::string out;
  for (std::size_t i = 0; i < fields.size(); ++i) out += (i > 0 ? "," : "") + fields[i];
  return out;
}

std::string drop_field(const std::string& line, std::size_t index) {
  std::vector<std::string> fields;
  std::stringstream stream(line);
  for (std::string field; std::getline(stream, field, ',');) fields.push_back(field);
  fields.erase(fields.begin() + static_cast<std::ptrdiff_t>(index));
  std::string out;
  for (std::size_t i = 0; i < fields.size(); ++i) out += (i > 0 ? "," : "") + fields[i];
  return out;
}

class BadInputTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    const std::string d = dir_->path().string();
    ASSERT_EQ(
        run_credence("-q synth --scenario cold-store --rows 300 --seed 9 --out '" + d + "/t.csv'")
            .exit_code,
        0);
    // A small real run: 2 chains, 10 kept samples, 64 hidden units.
    const std::string train =
        run_credence("-q train '" + d +
                     "/t.csv' --target fault_14d --id unit_id --impute median "
                     "--hidden 64 --chains 2 --burn-in 20 --samples 5 --thin 2 --out '" +
                     d + "/run.h5'")
            .output;
    ASSERT_TRUE(fs::exists(dir_->path() / "run.h5")) << train;

    const std::vector<std::string> table = lines_of(read_file(dir_->path() / "t.csv"));
    // Columns of the cold-store table: 0 unit_id, 1 site, 3 compressor_age_y, 13 fault_14d.
    auto with_row = [&](std::size_t field, const std::string& value) {
      std::vector<std::string> lines = table;
      lines[2] = replace_field(lines[2], field, value);
      return join_lines(lines);
    };
    dir_->write("nonnumber.csv", with_row(3, "abc"));
    dir_->write("unseen.csv", with_row(1, "moon-base"));
    std::vector<std::string> no_target, no_input;
    for (const std::string& line : table) {
      no_target.push_back(drop_field(line, 13));
      no_input.push_back(drop_field(line, 3));
    }
    dir_->write("notarget.csv", join_lines(no_target));
    dir_->write("noinput.csv", join_lines(no_input));
    std::string one_class = table[0] + "\n";
    for (std::size_t i = 1; i < table.size(); ++i) {
      if (table[i].ends_with(",no")) one_class += table[i] + "\n";
    }
    dir_->write("oneclass.csv", one_class);

    dir_->write("ragged.csv", "a,b,y\n1,2,x\n3,4\n5,6,y\n");
    dir_->write("unterminated.csv", "a,b,y\n1,\"2,x\n3,4,y\n");
    dir_->write("empty.csv", "");
    dir_->write("header_only.csv", "a,b,y\n");
    dir_->write("duplicate.csv", "a,a,y\n1,2,x\n3,4,y\n");
    dir_->write("blank_name.csv", "a,,y\n1,2,x\n3,4,y\n");
    std::string junk = "\x89PNG\r\n\x1a\n";
    for (int i = 0; i < 2000; ++i) junk.push_back(static_cast<char>((i * 37 + 11) % 256));
    dir_->write("junk.csv", junk);
    std::string utf16 = "\xFF\xFE";  // UTF-16LE: byte-order mark, then ASCII + 0x00 units
    for (char c : std::string("a,b,fault_14d\n1,2,no\n3,4,yes\n")) {
      utf16.push_back(c);
      utf16.push_back('\0');
    }
    dir_->write("utf16.csv", utf16);

    dir_->write("noversion.net", "hidden 8 relu\n");
    dir_->write("width0.net", "credence-net 1\nhidden 0 relu\n");
    dir_->write("activation.net", "credence-net 1\nhidden 8 swish\n");
    dir_->write("version2.net", "credence-net 2\nhidden 8 relu\n");
    dir_->write("prior.net", "credence-net 1\nhidden 8 relu\nprior gaussian scale=-1\n");
    dir_->write("layer.net", "credence-net 1\nhidden 8 relu\nlayer_prior 5 scale=1\n");
    dir_->write("junk.net", junk);

    const std::string run = read_file(dir_->path() / "run.h5");
    dir_->write("truncated.h5", run.substr(0, run.size() / 3));
    dir_->write("text.h5", table[0] + "\n" + table[1] + "\n");
    const std::string h5py = std::string("'") + CREDENCE_PYTHON +
                             "' -c \"import h5py, sys; f = h5py.File(sys.argv[1], 'w'); "
                             "f['x'] = [1.0, 2.0]; f.close()\" '" +
                             d + "/other.h5'";
    ASSERT_EQ(std::system(h5py.c_str()), 0) << "h5py (Debian's python3-h5py) is needed";
  }
  static void TearDownTestSuite() {
    delete dir_;
    dir_ = nullptr;
  }

  static testing::TempDir* dir_;
};

testing::TempDir* BadInputTest::dir_ = nullptr;

std::string expand(std::string text, const std::string& d, const std::string& out) {
  for (std::size_t at; (at = text.find("{d}")) != std::string::npos;) text.replace(at, 3, d);
  for (std::size_t at; (at = text.find("{out}")) != std::string::npos;) text.replace(at, 5, out);
  return text;
}

const std::string kTrain = "train {d}/t.csv --target fault_14d --id unit_id --impute median ";

std::vector<BadInput> bad_inputs() {
  return {
      // CSV tables.
      {"ragged row", "schema {d}/ragged.csv --target y --json {out}", "o.json", "ragged.csv:3:3",
       "add the missing field"},
      {"unterminated quote", "schema {d}/unterminated.csv --target y --json {out}", "o.json",
       "unterminated.csv:2:2", "close it with a quote"},
      {"empty file", "train {d}/empty.csv --target y --out {out}", "o.h5",
       "empty.csv: the file is empty", "needs a header row"},
      {"header only", "schema {d}/header_only.csv --target y --json {out}", "o.json",
       "header_only.csv", "add one row per case"},
      {"duplicate column", "schema {d}/duplicate.csv --target y --json {out}", "o.json",
       "duplicate.csv:1:2", "give each column its own name"},
      {"empty column name", "schema {d}/blank_name.csv --target y --json {out}", "o.json",
       "blank_name.csv:1:", "name"},
      {"binary junk", "schema {d}/junk.csv --target y --json {out}", "o.json",
       "junk.csv:4:62: a NUL byte", "save the table as UTF-8"},
      {"UTF-16 file", "train {d}/utf16.csv --target fault_14d --out {out}", "o.h5",
       "utf16.csv: the file starts with a UTF-16 byte-order mark", "save the table as UTF-8"},
      {"missing target column", "schema {d}/t.csv --target fault --json {out}", "o.json",
       "'fault' is not in the header", "did you mean 'fault_14d'?"},
      {"one class only",
       "train {d}/oneclass.csv --target fault_14d --id unit_id --impute median --out {out}", "o.h5",
       "oneclass.csv: the target column 'fault_14d' holds one class only", "check --target"},
      {"missing values without --impute",
       "train {d}/t.csv --target fault_14d --id unit_id --out {out}", "o.h5",
       "column 'oil_level_pct'", "--impute median"},
      {"non-number at predict time", "predict {d}/run.h5 {d}/nonnumber.csv --out {out}", "o.csv",
       "nonnumber.csv:3:4", "fix the cell"},
      {"unseen category", "predict {d}/run.h5 {d}/unseen.csv --out {out}", "o.csv",
       "unseen.csv:3:2", "fix the value"},
      {"model input missing", "predict {d}/run.h5 {d}/noinput.csv --out {out}", "o.csv",
       "noinput.csv: column 'compressor_age_y'", "add it"},
      {"no target to assess", "assess {d}/run.h5 {d}/notarget.csv --json {out}", "o.json",
       "notarget.csv: no target column 'fault_14d'", "use predict"},
      {"missing data file", "predict {d}/run.h5 {d}/absent.csv --out {out}", "o.csv", "absent.csv",
       "check the path"},
      {"unknown --drop column", kTrain + "--drop nosuch --out {out}", "o.h5", "--drop",
       "available columns"},
      // Net files.
      {"net without version line", kTrain + "--net {d}/noversion.net --out {out}", "o.h5",
       "noversion.net:1:1", "expected the version line"},
      {"net width 0", kTrain + "--net {d}/width0.net --out {out}", "o.h5", "width0.net:2:8",
       "from 1 to 1048576"},
      {"net unknown activation", kTrain + "--net {d}/activation.net --out {out}", "o.h5",
       "activation.net:2:10", "relu, tanh, sigmoid, softplus or identity"},
      {"net other version", kTrain + "--net {d}/version2.net --out {out}", "o.h5",
       "version2.net:1:", "expected"},
      {"net negative prior scale", kTrain + "--net {d}/prior.net --out {out}", "o.h5",
       "prior.net:3:", "expected"},
      {"net prior on a missing layer", kTrain + "--net {d}/layer.net --out {out}", "o.h5",
       "layer.net:3:", "layer"},
      {"net binary junk", kTrain + "--net {d}/junk.net --out {out}", "o.h5", "junk.net:1:1",
       "expected the version line"},
      // Run files.
      {"truncated run (inspect)", "inspect {d}/truncated.h5 --json {out}", "o.json", "truncated.h5",
       "use an intact copy"},
      {"truncated run (predict)", "predict {d}/truncated.h5 {d}/t.csv --out {out}", "o.csv",
       "truncated.h5", "use an intact copy"},
      {"text file as run (assess)", "assess {d}/text.h5 {d}/t.csv --json {out}", "o.json",
       "text.h5: not an HDF5 file", "give the .h5 file written by 'credence train'"},
      {"HDF5 not a run (diagnose)", "diagnose {d}/other.h5 --json {out}", "o.json", "other.h5",
       "give the file written by 'credence train'"},
      {"HDF5 not a run (merge)", "merge {d}/run.h5 {d}/other.h5 --out {out}", "o.h5", "other.h5",
       "give the file written by 'credence train'"},
      {"resume a text file", kTrain + "--resume {d}/text.h5", "o.h5", "text.h5",
       "give the .h5 file"},
      {"report on a truncated run", "report {d}/truncated.h5 {d}/t.csv --out {out}", "o.html",
       "truncated.h5", "use an intact copy"},
      {"missing run file", "inspect {d}/absent.h5 --json {out}", "o.json", "absent.h5",
       "check the path"},
      // Option values.
      // Sampler settings name the flag the user typed, not the library's setting name.
      {"negative --lr", kTrain + "--lr -0.1 --out {out}", "o.h5", "--lr -0.1",
       "a positive learning rate"},
      {"negative --step-size", kTrain + "--step-size -1 --out {out}", "o.h5", "--step-size -1",
       "a positive step"},
      {"--friction above 1", kTrain + "--method sghmc --friction 2 --out {out}", "o.h5",
       "--friction 2", "(0, 1]"},
      {"zero --max-move", kTrain + "--method rsghmc --max-move 0 --out {out}", "o.h5",
       "--max-move 0", "a positive largest move"},
      {"negative --temperature (train)", kTrain + "--temperature -1 --out {out}", "o.h5",
       "--temperature -1", "1 is the posterior"},
      {"zero --leapfrog", kTrain + "--method hmc --leapfrog 0 --out {out}", "o.h5",
       "--leapfrog 0", "1 or more"},
      {"--target-accept of 1", kTrain + "--method hmc --target-accept 1 --out {out}", "o.h5",
       "--target-accept 1", "(0, 1)"},
      {"negative --prior-scale", kTrain + "--prior-scale -2 --out {out}", "o.h5",
       "--prior-scale -2", "a positive scale"},
      {"missing net file", kTrain + "--net {d}/absent.net --out {out}", "o.h5", "absent.net",
       "no such file; check the path"},
      {"bad predict --unseen", "predict {d}/run.h5 {d}/t.csv --unseen skip --out {out}", "o.csv",
       "--unseen 'skip'", "error, ignore"},
      {"zero --samples", kTrain + "--samples 0 --out {out}", "o.h5", "--samples 0",
       "give 1 or more"},
      {"zero --chains", kTrain + "--chains 0 --out {out}", "o.h5", "--chains 0", "give 1 to"},
      {"zero --batch", kTrain + "--batch 0 --out {out}", "o.h5", "--batch 0", "give 1 or more"},
      {"unknown --method", kTrain + "--method gibbs --out {out}", "o.h5", "--method",
       "valid methods are"},
      {"bad --hidden", kTrain + "--hidden 4,x --out {out}", "o.h5", "--hidden '4,x'",
       "write widths like 64,64"},
      {"absurd --hidden width", kTrain + "--hidden 2000000 --out {out}", "o.h5", "hidden layer 1",
       "1..1048576"},
      {"bad --test-fraction", kTrain + "--test-fraction 1.5 --out {out}", "o.h5",
       "--test-fraction 1.5", "sum to less than 1"},
      {"bad --delimiter", kTrain + "--delimiter ab --out {out}", "o.h5", "--delimiter 'ab'",
       "one character"},
      {"zero --bins", "assess {d}/run.h5 {d}/t.csv --bins 0 --json {out}", "o.json", "--bins 0",
       "give 1 to 1000"},
      {"bad --split", "assess {d}/run.h5 {d}/t.csv --split middle --json {out}", "o.json",
       "--split 'middle'", "use test"},
      {"negative --bootstrap", "assess {d}/run.h5 {d}/t.csv --bootstrap -5 --json {out}", "o.json",
       "--bootstrap -5", "give a number of resamples"},
      {"negative predict --samples", "predict {d}/run.h5 {d}/t.csv --samples -3 --out {out}",
       "o.csv", "--samples -3", "give a positive count"},
      {"zero --temperature", "predict {d}/run.h5 {d}/t.csv --temperature 0 --out {out}", "o.csv",
       "--temperature 0", "give a positive number"},
      {"bad --flag-by", "predict {d}/run.h5 {d}/t.csv --flag-by doubt --out {out}", "o.csv",
       "--flag-by 'doubt'", "use entropy"},
      {"bad --step-sizes range",
       "sweep {d}/t.csv --target fault_14d --id unit_id --impute median --step-sizes 1:x --out "
       "{out}",
       "sweep_out", "--step-sizes '1:x'", "FROM:TO:COUNT"},
      {"negative --step-sizes",
       "sweep {d}/t.csv --target fault_14d --id unit_id --impute median --step-sizes -1,0.1 --out "
       "{out}",
       "sweep_out", "--step-sizes '-1,0.1'", "give positive numbers"},
      {"unknown compare method",
       "compare {d}/t.csv --target fault_14d --id unit_id --impute median --methods sgld,gibbs "
       "--out {out}",
       "compare_out", "--methods", "valid methods are"},
      {"zero synth rows", "synth --rows 0 --out {out}", "o.csv", "--rows 0", "give 1 to"},
      {"unknown scenario", "synth --scenario moon --out {out}", "o.csv", "'moon'", "choose one of"},
      // The memory guard.
      {"predict over --max-memory", "predict {d}/run.h5 {d}/t.csv --max-memory 1M --out {out}",
       "o.csv", "would need about", "--max-memory"},
      {"assess over --max-memory", "assess {d}/run.h5 {d}/t.csv --max-memory 1K --json {out}",
       "o.json", "would need about", "raise the limit"},
      {"schema over --max-memory",
       "schema {d}/t.csv --target fault_14d --max-memory 1K --json {out}", "o.json",
       "t.csv: reading a table of", "--max-memory"},
      {"train over --max-memory",
       "train {d}/t.csv --target fault_14d --max-memory 64K --out {out}", "o.h5",
       "would need about", "--max-memory"},
      {"bad --max-memory", "predict {d}/run.h5 {d}/t.csv --max-memory lots --out {out}", "o.csv",
       "--max-memory 'lots'", "such as 8G"},
  };
}

TEST_F(BadInputTest, EveryCaseExitsTwoWithPlaceAdviceAndNoOutput) {
  const std::vector<BadInput> cases = bad_inputs();
  ASSERT_GE(cases.size(), 30u);
  const std::string d = dir_->path().string();
  int index = 0;
  for (const BadInput& c : cases) {
    SCOPED_TRACE(c.name);
    const std::string prefix = "case" + std::to_string(index++) + "_";
    const fs::path out = dir_->path() / (prefix + c.out);
    const testing::CommandOutput result = run_credence(expand(c.args, d, out.string()));
    EXPECT_EQ(result.exit_code, 2) << result.output;
    EXPECT_NE(result.output.find(c.place), std::string::npos)
        << "place '" << c.place << "' missing from: " << result.output;
    EXPECT_NE(result.output.find(c.advice), std::string::npos)
        << "advice '" << c.advice << "' missing from: " << result.output;
    // One message: no crash report, sanitizer trace or exception text.
    EXPECT_EQ(result.output.find("terminate called"), std::string::npos) << result.output;
    EXPECT_EQ(result.output.find("Sanitizer"), std::string::npos) << result.output;
    // Neither the output nor a temporary file beside it.
    for (const auto& entry : fs::directory_iterator(dir_->path())) {
      EXPECT_NE(entry.path().filename().string().rfind(prefix, 0), 0u)
          << "left behind: " << entry.path();
    }
  }
}

}  // namespace
}  // namespace credence
