// Run file round trip, the documented layout read by h5py, and refusals of bad files.
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "ensemble/test_runs.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::append_rows;
using testing::expect_failure;
using testing::make_header;
using testing::state_after;
using testing::TempDir;

constexpr int kChains = 3;
constexpr std::int64_t kParameters = 300;
constexpr std::int64_t kPerChain = 10;

// Writes a complete run: chains interleaved, a commit after every fourth sample.
std::string write_run(const TempDir& dir, const std::string& name = "run.h5") {
  const std::string path = (dir.path() / name).string();
  RunHeader header = make_header(kChains, kParameters);
  Result<std::unique_ptr<RunWriter>> writer = RunWriter::create(path, header, false);
  EXPECT_TRUE(writer.ok()) << writer.status().to_string();
  int rows = 0;
  for (std::int64_t k = 0; k < kPerChain; ++k) {
    for (int c = 0; c < kChains; ++c) {
      EXPECT_TRUE(append_rows(**writer, c, k).ok());
      EXPECT_TRUE((*writer)->set_chain_state(state_after(header, c, k)).ok());
      if (++rows % 4 == 0) {
        EXPECT_TRUE((*writer)->commit().ok());
      }
    }
  }
  ChainState stopped = state_after(header, 2, kPerChain - 1);
  stopped.status = ChainStatus::kDiverged;
  stopped.reason = "potential was NaN at step 101; try a smaller step size";
  EXPECT_TRUE((*writer)->set_chain_state(stopped).ok());
  Status finished = (*writer)->finish(RunStatus::kComplete);
  EXPECT_TRUE(finished.ok()) << finished.to_string();
  return path;
}

TEST(RunFile, RoundTripReadsBackEverythingWritten) {
  TempDir dir;
  const std::string path = write_run(dir);
  const RunHeader expected = make_header(kChains, kParameters);
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(path);
  ASSERT_TRUE(reader.ok()) << reader.status().to_string();
  const RunReader& run = **reader;

  const RunHeader& h = run.header();
  EXPECT_EQ(h.tool_version, expected.tool_version);
  EXPECT_EQ(h.command_line, expected.command_line);
  EXPECT_EQ(h.created_utc, expected.created_utc);
  EXPECT_EQ(h.data_file, expected.data_file);
  EXPECT_EQ(h.data_sha256, expected.data_sha256);
  EXPECT_EQ(h.data_rows, expected.data_rows);
  EXPECT_EQ(h.train_rows, expected.train_rows);
  EXPECT_EQ(h.val_rows, expected.val_rows);
  EXPECT_EQ(h.test_rows, expected.test_rows);
  EXPECT_TRUE(h.preprocessing == expected.preprocessing);
  EXPECT_EQ(h.preprocessing.features.size(), 3u);  // age, site (one-hot), dose
  EXPECT_EQ(h.net_text, expected.net_text);
  EXPECT_EQ(h.parameters, kParameters);
  EXPECT_EQ(h.settings, expected.settings);  // same order, same types, same values
  EXPECT_EQ(h.chains, kChains);
  EXPECT_EQ(h.samples_per_chain, expected.samples_per_chain);
  EXPECT_EQ(h.probe_rows, expected.probe_rows);
  EXPECT_EQ(h.probe_labels, expected.probe_labels);
  EXPECT_FALSE(h.probe_labels.empty());
  EXPECT_EQ(h.projections, 4);
  EXPECT_EQ(h.layers, 2);
  EXPECT_EQ(h.state_template.floats.at("momentum").size(), static_cast<std::size_t>(kParameters));
  EXPECT_EQ(h.state_template.words.at("rng").size(), 4u);

  const RunSummary& s = run.summary();
  EXPECT_EQ(s.status, RunStatus::kComplete);
  EXPECT_FALSE(s.recovered);
  EXPECT_EQ(s.samples, kChains * kPerChain);
  EXPECT_EQ(s.kept_per_chain, std::vector<std::int64_t>(kChains, kPerChain));
  EXPECT_EQ(s.chain_status[0], ChainStatus::kRunning);
  EXPECT_EQ(s.chain_status[2], ChainStatus::kDiverged);
  EXPECT_EQ(s.chain_reason[2], "potential was NaN at step 101; try a smaller step size");
  EXPECT_EQ(s.steps_per_chain[1], 10 * kPerChain + 1);
  EXPECT_GT(s.file_bytes, 0);

  Result<Eigen::MatrixXf> theta = run.samples();
  Result<std::vector<std::int32_t>> chains = run.sample_chains();
  Result<std::vector<std::int64_t>> steps = run.sample_steps();
  Result<std::vector<std::int64_t>> indices = run.sample_indices();
  Result<std::vector<double>> log_lik = run.probe_log_lik();
  Result<Eigen::MatrixXf> prob = run.probe_prob();
  Result<Eigen::MatrixXf> proj = run.projections();
  Result<Eigen::MatrixXf> norms = run.layer_sq_norms();
  ASSERT_TRUE(theta.ok() && chains.ok() && steps.ok() && indices.ok() && log_lik.ok() &&
              prob.ok() && proj.ok() && norms.ok());
  ASSERT_EQ(theta->rows(), kParameters);
  ASSERT_EQ(theta->cols(), kChains * kPerChain);
  EXPECT_EQ(prob->rows(), static_cast<Eigen::Index>(expected.probe_rows.size()));
  for (Eigen::Index j = 0; j < theta->cols(); ++j) {
    const int c = static_cast<int>(j % kChains);
    const std::int64_t k = j / kChains;
    ASSERT_EQ((*chains)[static_cast<std::size_t>(j)], c);
    ASSERT_EQ((*steps)[static_cast<std::size_t>(j)], 10 * (k + 1));
    ASSERT_EQ((*indices)[static_cast<std::size_t>(j)], k);
    ASSERT_EQ((*log_lik)[static_cast<std::size_t>(j)], -0.5 * static_cast<double>(k) - c);
    for (Eigen::Index i = 0; i < kParameters; ++i) {
      const float want = testing::theta_value(c, k, i);
      ASSERT_EQ(std::memcmp(&(*theta)(i, j), &want, sizeof want), 0)
          << "sample " << j << " i " << i;
    }
    EXPECT_EQ((*proj)(1, j), static_cast<float>(c) - 1.0f + 0.125f * static_cast<float>(k));
    EXPECT_EQ((*norms)(0, j), static_cast<float>(k) + 1.0f);
    EXPECT_EQ((*prob)(2, j), testing::probe_value(2, k));
  }

  for (int c = 0; c < kChains; ++c) {
    Result<std::vector<TraceRecord>> traces = run.traces(c);
    ASSERT_TRUE(traces.ok()) << traces.status().to_string();
    ASSERT_EQ(traces->size(), static_cast<std::size_t>(2 * kPerChain));
    const TraceRecord& t = (*traces)[3];  // kept 1, second row
    EXPECT_EQ(t.chain, c);
    EXPECT_EQ(t.step, 20);
    EXPECT_EQ(t.potential, 100.0 / 3 + c);
    EXPECT_TRUE(std::isnan(t.accuracy));
    EXPECT_EQ((*traces)[2].accuracy, 0.75);
    EXPECT_TRUE(std::isnan(t.speed_ratio));
    EXPECT_EQ(t.acceptance, 0.9);
  }
  expect_failure(run.traces(kChains).status(), StatusCode::kInvalidInput, {"no chain 3"});

  Result<std::vector<ChainState>> states = run.chain_states();
  ASSERT_TRUE(states.ok());
  for (int c = 0; c < kChains; ++c) {
    ChainState want = state_after(expected, c, kPerChain - 1);
    const ChainState& got = (*states)[static_cast<std::size_t>(c)];
    EXPECT_EQ(got.chain, c);
    EXPECT_EQ(got.next_step, want.next_step);
    EXPECT_EQ(got.kept, want.kept);
    EXPECT_EQ(got.theta, want.theta);
    EXPECT_TRUE(got.state == want.state);
  }
}

TEST(RunFile, ReopenOfCompleteRunIsRefused) {
  TempDir dir;
  const std::string path = write_run(dir);
  std::vector<ChainState> states;
  expect_failure(RunWriter::reopen(path, states).status(), StatusCode::kInvalidInput,
                 {path, "already complete"});
}

// Parses "key v1 v2 ..." lines printed by tests/tools/read_run.py.
std::map<std::string, std::vector<std::string>> parse_lines(const std::string& output) {
  std::map<std::string, std::vector<std::string>> out;
  std::istringstream in(output);
  for (std::string line; std::getline(in, line);) {
    std::istringstream words(line);
    std::string key, word;
    words >> key;
    if (key == "setting") {
      words >> word;
      key += "_" + word;
    }
    while (words >> word) out[key].push_back(word);
  }
  return out;
}

// The documented layout is true: h5py + numpy, following docs/run-file.md, find
// the same counts, per-sample theta sums and preprocessing as the C++ reader.
TEST(RunFile, H5pyReaderFollowingTheDocsAgrees) {
  TempDir dir;
  const std::string path = write_run(dir);
  int code = 0;
  const std::string csv = dir.write("clinic.csv", testing::kTestCsv);
  const std::string output =
      testing::run_python(std::string("'") + CREDENCE_SOURCE_DIR + "/tests/tools/read_run.py' '" +
                              path + "' '" + csv + "'",
                          code);
  ASSERT_EQ(code, 0) << output;
  auto facts = parse_lines(output);
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(path);
  ASSERT_TRUE(reader.ok());
  const RunHeader& h = (*reader)->header();

  EXPECT_EQ(facts["format"], (std::vector<std::string>{"credence-run", "2"}));
  EXPECT_EQ(facts["status"], std::vector<std::string>{"complete"});
  EXPECT_EQ(facts["samples"], std::vector<std::string>{std::to_string(kChains * kPerChain)});
  EXPECT_EQ(facts["per_chain"], std::vector<std::string>(kChains, std::to_string(kPerChain)));
  EXPECT_EQ(facts["parameters"], std::vector<std::string>{std::to_string(kParameters)});
  Result<Eigen::MatrixXf> theta = (*reader)->samples();
  ASSERT_TRUE(theta.ok());
  ASSERT_EQ(facts["theta_sums"].size(), static_cast<std::size_t>(theta->cols()));
  for (Eigen::Index j = 0; j < theta->cols(); ++j) {
    const double sum = theta->col(j).cast<double>().sum();
    EXPECT_NEAR(std::stod(facts["theta_sums"][static_cast<std::size_t>(j)]), sum,
                1e-12 * std::abs(sum));
  }
  Result<std::vector<std::int32_t>> chains = (*reader)->sample_chains();
  ASSERT_TRUE(chains.ok());
  for (std::size_t j = 0; j < chains->size(); ++j) {
    EXPECT_EQ(facts["chains_of_samples"][j], std::to_string((*chains)[j]));
  }
  EXPECT_EQ(facts["trace_1"][0], std::to_string(2 * kPerChain));
  EXPECT_EQ(facts["target"], std::vector<std::string>{"outcome"});
  EXPECT_EQ(facts["class_names"], h.preprocessing.class_names);
  const auto& features = h.preprocessing.features;
  ASSERT_EQ(facts["feature_means"].size(), features.size());
  for (std::size_t i = 0; i < features.size(); ++i) {
    EXPECT_EQ(facts["feature_names"][i], features[i].name);
    EXPECT_EQ(std::stod(facts["feature_means"][i]), features[i].mean);
    EXPECT_EQ(std::stod(facts["feature_scales"][i]), features[i].scale);
  }
  EXPECT_EQ(facts["categories_site"], (std::vector<std::string>{"east", "north", "south"}));
  const std::string width = std::to_string(h.preprocessing.input_width);
  EXPECT_EQ(facts["input_width"], (std::vector<std::string>{width, width}));
  EXPECT_EQ(facts["setting_method"], std::vector<std::string>{"sghmc"});
  EXPECT_EQ(facts["setting_seed"], std::vector<std::string>{"42"});
  EXPECT_EQ(std::stod(facts["setting_step_size"].at(0)), 1.5e-3);
  EXPECT_EQ(facts["train_rows"], std::vector<std::string>{std::to_string(h.train_rows.size())});

  // The documented encoding recipe, applied by numpy to the stored preprocessing,
  // gives the data module's design matrix.
  ReadOptions read;
  read.text_columns = text_columns_of(h.preprocessing);
  Result<Table> table = parse_table(testing::kTestCsv, "clinic.csv", read);
  ASSERT_TRUE(table.ok());
  Result<Eigen::MatrixXf> x = transform_table(h.preprocessing, *table);  // (D, N)
  ASSERT_TRUE(x.ok()) << x.status().to_string();
  for (Eigen::Index n = 0; n < x->cols(); ++n) {
    const std::vector<std::string>& row = facts["encoded_" + std::to_string(n)];
    ASSERT_EQ(row.size(), static_cast<std::size_t>(x->rows())) << "row " << n;
    for (Eigen::Index d = 0; d < x->rows(); ++d) {
      EXPECT_NEAR(std::stod(row[static_cast<std::size_t>(d)]), (*x)(d, n), 1e-6)
          << "row " << n << " design row " << d;
    }
  }
}

TEST(RunFile, ExistingFileNeedsOverwrite) {
  TempDir dir;
  const std::string path = dir.write("run.h5", "an older file\n");
  RunHeader header = make_header(2, 12);
  expect_failure(RunWriter::create(path, header, false).status(), StatusCode::kInvalidInput,
                 {path, "already exists", "--force"});
  std::ifstream still(path);
  std::string line;
  std::getline(still, line);
  EXPECT_EQ(line, "an older file");  // untouched
  Result<std::unique_ptr<RunWriter>> writer = RunWriter::create(path, header, true);
  ASSERT_TRUE(writer.ok()) << writer.status().to_string();
  ASSERT_TRUE((*writer)->finish(RunStatus::kInterrupted).ok());
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(path);
  ASSERT_TRUE(reader.ok()) << reader.status().to_string();
  EXPECT_EQ((*reader)->summary().status, RunStatus::kInterrupted);
  EXPECT_EQ((*reader)->summary().samples, 0);
}

TEST(RunFile, FailedCreateLeavesNoFile) {
  TempDir dir;
  const std::string path = (dir.path() / "no_such_dir" / "run.h5").string();
  expect_failure(RunWriter::create(path, make_header(2, 12), false).status(), StatusCode::kIoError,
                 {path});
  RunHeader bad = make_header(2, 12);
  bad.settings.emplace_back("seed", std::int64_t{3});  // duplicate name
  const std::string other = (dir.path() / "run.h5").string();
  EXPECT_FALSE(RunWriter::create(other, bad, false).ok());
  EXPECT_FALSE(std::filesystem::exists(other));
}

TEST(RunFile, MissingFileIsNamed) {
  TempDir dir;
  const std::string path = (dir.path() / "absent.h5").string();
  expect_failure(RunReader::open(path).status(), StatusCode::kInvalidInput, {path, "no such file"});
}

TEST(RunFile, TextFileIsNotHdf5) {
  TempDir dir;
  const std::string path = dir.write("notes.h5", "age,site\n1,north\n");
  expect_failure(RunReader::open(path).status(), StatusCode::kCorrupt, {path, "not an HDF5 file"});
}

TEST(RunFile, TruncatedFileIsCorrupt) {
  TempDir dir;
  const std::string intact = write_run(dir);
  const auto size = std::filesystem::file_size(intact);
  // Half the bytes (the brief's case), a tenth, and all but the last byte.
  for (std::uintmax_t keep : {size / 2, size / 10, size - 1}) {
    const std::string path = (dir.path() / ("cut_" + std::to_string(keep) + ".h5")).string();
    std::filesystem::copy_file(intact, path);
    std::filesystem::resize_file(path, keep);
    expect_failure(RunReader::open(path).status(), StatusCode::kCorrupt, {path, "truncated"});
    std::vector<ChainState> states;
    expect_failure(RunWriter::reopen(path, states).status(), StatusCode::kCorrupt,
                   {path, "truncated"});
  }
}

// Files made with h5py (the reference HDF5 binding): a foreign HDF5 file, and our file
// with its format version raised, and lowered to version 1 (whose strings were
// variable-length) with its `format` string rewritten as h5py writes str: variable-length.
TEST(RunFile, ForeignHdf5AndOtherVersionsAreRefused) {
  TempDir dir;
  const std::string foreign = (dir.path() / "foreign.h5").string();
  const std::string future = write_run(dir, "future.h5");
  const std::string older = write_run(dir, "older.h5");
  int code = 0;
  const std::string script =
      "import h5py, sys\n"
      "with h5py.File(sys.argv[1], 'w') as f: f['x'] = [1, 2, 3]\n"
      "with h5py.File(sys.argv[2], 'r+') as f: f.attrs['format_version'] = 3\n"
      "with h5py.File(sys.argv[3], 'r+') as f:\n"
      "    f.attrs['format_version'] = 1\n"
      "    f.attrs['format'] = 'credence-run'\n";
  const std::string script_path = dir.write("make.py", script);
  const std::string output = testing::run_python(
      "'" + script_path + "' '" + foreign + "' '" + future + "' '" + older + "'", code);
  ASSERT_EQ(code, 0) << output;
  expect_failure(RunReader::open(foreign).status(), StatusCode::kCorrupt,
                 {foreign, "not a credence run file"});
  expect_failure(RunReader::open(future).status(), StatusCode::kCorrupt,
                 {future, "format version 3 found", "reads version 2", "upgrade credence"});
  expect_failure(RunReader::open(older).status(), StatusCode::kCorrupt,
                 {older, "format version 1 found", "reads version 2", "older credence"});
  std::vector<ChainState> states;
  expect_failure(RunWriter::reopen(future, states).status(), StatusCode::kCorrupt,
                 {future, "format version 3 found"});
}

}  // namespace
}  // namespace credence
