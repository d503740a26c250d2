// The breast-cancer table bundled with scikit-learn (load_breast_cancer, written to CSV by
// tests/tools/export_sklearn_tables.py): the parsed matrix, the standardisation and the split
// checked against numpy on the same rows.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <sstream>
#include <string>

#include "credence/data.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

const std::string kDir = CREDENCE_REFDATA_DIR;
const std::string kCsv = kDir + "/breast_cancer.csv";
constexpr Eigen::Index kRows = 569;
constexpr Eigen::Index kFeatures = 30;

// numpy's (569, 30) float64 matrix, row-major.
std::vector<double> numpy_matrix() {
  std::vector<double> x(static_cast<std::size_t>(kRows * kFeatures));
  std::ifstream in(kDir + "/breast_cancer_x.f64", std::ios::binary);
  in.read(reinterpret_cast<char*>(x.data()), static_cast<std::streamsize>(x.size() * sizeof(double)));
  EXPECT_TRUE(in.good()) << "run the fixtures/sklearn_tables test first";
  return x;
}

std::string slurp(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

Result<Dataset> load(std::uint64_t seed) {
  DataOptions options;
  options.schema.target = "diagnosis";
  options.split.seed = seed;
  return load_dataset(kCsv, options);
}

TEST(BreastCancer, TableEqualsNumpysMatrix) {
  auto data = load(1);
  ASSERT_TRUE(data.ok()) << data.status().to_string();
  const std::vector<double> x = numpy_matrix();
  ASSERT_EQ(data->table.rows(), kRows);
  ASSERT_EQ(data->table.columns.size(), static_cast<std::size_t>(kFeatures + 1));
  std::int64_t mismatches = 0;
  for (Eigen::Index i = 0; i < kRows; ++i) {
    for (Eigen::Index j = 0; j < kFeatures; ++j) {
      const double ours = data->table.columns[static_cast<std::size_t>(j)].numbers[static_cast<std::size_t>(i)];
      const double ref = x[static_cast<std::size_t>(i * kFeatures + j)];
      // The CSV holds Python's shortest round-trip text, so parsing gives the same double,
      // and hence the same float32.
      if (static_cast<float>(ours) != static_cast<float>(ref) || ours != ref) {
        if (++mismatches <= 5) ADD_FAILURE() << "row " << i << " col " << j << ": " << ours << " vs " << ref;
      }
    }
  }
  EXPECT_EQ(mismatches, 0);
  // Class counts: sklearn's description of the table, "212 - Malignant, 357 - Benign";
  // names sorted lexicographically.
  EXPECT_EQ(data->schema.class_names, (std::vector<std::string>{"benign", "malignant"}));
  EXPECT_EQ(data->schema.class_counts, (std::vector<std::int64_t>{357, 212}));
  EXPECT_EQ(data->preprocessing.input_width, kFeatures);
  EXPECT_EQ(data->x.rows(), kFeatures);
  EXPECT_EQ(data->x.cols(), kRows);
}

TEST(BreastCancer, StandardisationMatchesNumpyOnTheTrainingRows) {
  auto data = load(testing::test_seed(1));
  ASSERT_TRUE(data.ok()) << data.status().to_string();
  testing::TempDir dir;
  std::string rows;
  for (std::int64_t r : data->split.train) rows += std::to_string(r) + "\n";
  const std::string rows_path = dir.write("train_rows.txt", rows);
  const std::string out_path = (dir.path() / "ref.f64").string();
  // Reference: numpy mean and std (ddof=0) over the training rows, and the standardised
  // matrix of every row, in float64.
  const std::string script = dir.write("ref.py",
      "import sys, numpy as np\n"
      "x = np.fromfile(sys.argv[1], dtype='<f8').reshape(569, 30)\n"
      "rows = np.loadtxt(sys.argv[2], dtype=np.int64)\n"
      "mean = x[rows].mean(axis=0)\n"
      "std = x[rows].std(axis=0)\n"
      "z = (x - mean) / std\n"
      "np.concatenate([mean, std, z.ravel()]).astype('<f8').tofile(sys.argv[3])\n");
  const std::string command = std::string("'") + CREDENCE_PYTHON + "' '" + script + "' '" + kDir +
                              "/breast_cancer_x.f64' '" + rows_path + "' '" + out_path + "'";
  ASSERT_EQ(std::system(command.c_str()), 0) << command;
  const std::string bytes = slurp(out_path);
  ASSERT_EQ(bytes.size(), sizeof(double) * static_cast<std::size_t>(60 + kRows * kFeatures));
  std::vector<double> ref(bytes.size() / sizeof(double));
  std::memcpy(ref.data(), bytes.data(), bytes.size());

  for (std::size_t j = 0; j < static_cast<std::size_t>(kFeatures); ++j) {
    const FeatureEncoding& f = data->preprocessing.features[j];
    EXPECT_NEAR(f.mean, ref[j], 1e-12 * std::abs(ref[j])) << f.name;
    EXPECT_NEAR(f.scale, ref[30 + j], 1e-12 * ref[30 + j]) << f.name;
  }
  double worst = 0.0;
  for (Eigen::Index i = 0; i < kRows; ++i) {
    for (Eigen::Index j = 0; j < kFeatures; ++j) {
      const double z = ref[static_cast<std::size_t>(60 + i * kFeatures + j)];
      worst = std::max(worst, std::abs(static_cast<double>(data->x(j, i)) - z) / std::max(1.0, std::abs(z)));
    }
  }
  // float32 rounding of the same double: half an ulp, 2^-24 relative.
  EXPECT_LE(worst, 1.2e-7) << "largest relative difference " << worst;
}

TEST(BreastCancer, StratifiedSplitHoldsProportionsAndFollowsTheSeed) {
  auto a = load(testing::test_seed(1));
  auto again = load(1);
  auto other = load(2);
  ASSERT_TRUE(a.ok() && again.ok() && other.ok());
  EXPECT_EQ(a->split.test, again->split.test);
  EXPECT_EQ(a->split.validation, again->split.validation);
  EXPECT_NE(a->split.test, other->split.test);
  // 569 rows: test round(113.8) = 114, validation round(56.9) = 57.
  EXPECT_EQ(a->split.test.size(), 114u);
  EXPECT_EQ(a->split.validation.size(), 57u);
  EXPECT_EQ(a->split.train.size(), 398u);
  for (int k = 0; k < 2; ++k) {
    const double n_k = static_cast<double>(a->schema.class_counts[static_cast<std::size_t>(k)]);
    auto in = [&](const std::vector<std::int64_t>& rows) {
      return static_cast<double>(std::count_if(rows.begin(), rows.end(), [&](std::int64_t r) {
        return a->labels[static_cast<std::size_t>(r)] == k;
      }));
    };
    EXPECT_LE(std::abs(in(a->split.test) - 0.2 * n_k), 1.0);
    EXPECT_LE(std::abs(in(a->split.validation) - 0.1 * n_k), 1.0);
    EXPECT_LE(std::abs(in(a->split.train) - 0.7 * n_k), 1.0);
  }
}

TEST(BreastCancer, FileDigestMatchesHashlib) {
  // The export script records hashlib.sha256 of the CSV it wrote.
  const std::string facts = slurp(kDir + "/breast_cancer.json");
  const std::string key = "\"sha256\": \"";
  const std::size_t at = facts.find(key);
  ASSERT_NE(at, std::string::npos) << facts;
  const std::string reference = facts.substr(at + key.size(), 64);
  Result<std::string> ours = file_sha256_hex(kCsv);
  ASSERT_TRUE(ours.ok());
  EXPECT_EQ(*ours, reference);
}

}  // namespace
}  // namespace credence
