// Tests of the dense kernels: the Eigen GEMM versions against the plain loop versions.
#include "net/dense.h"

#include <gtest/gtest.h>

#include <random>

#include "testing/seed.h"

namespace credence {
namespace {

template <typename S>
MatX<S> random_matrix(Index rows, Index cols, std::mt19937_64& engine) {
  std::uniform_real_distribution<double> uniform(-1.0, 1.0);
  MatX<S> m(rows, cols);
  for (Index i = 0; i < m.size(); ++i) m.data()[i] = static_cast<S>(uniform(engine));
  return m;
}

template <typename S>
void check_against_loops(Index in, Index out, Index batch, double tolerance,
                         std::uint64_t seed) {
  std::mt19937_64 engine(seed);
  const MatX<S> x = random_matrix<S>(in, batch, engine);
  const MatX<S> w = random_matrix<S>(out, in, engine);
  const VecX<S> b = random_matrix<S>(out, 1, engine);
  const MatX<S> d_y = random_matrix<S>(out, batch, engine);
  // Start the accumulators non-zero so that += (not =) is checked too.
  const MatX<S> d_w0 = random_matrix<S>(out, in, engine);
  const VecX<S> d_b0 = random_matrix<S>(out, 1, engine);

  MatX<S> y_fast(out, batch), y_loop(out, batch);
  dense_forward<S>(y_fast, x, w, b);
  dense_forward_loop<S>(y_loop, x, w, b);
  EXPECT_LE((y_fast - y_loop).cwiseAbs().maxCoeff(), tolerance);

  MatX<S> d_x_fast = MatX<S>::Constant(in, batch, S(7)), d_x_loop(in, batch);
  MatX<S> d_w_fast = d_w0, d_w_loop = d_w0;
  VecX<S> d_b_fast = d_b0, d_b_loop = d_b0;
  dense_backward<S>(d_x_fast, d_w_fast, d_b_fast, d_y, x, w);
  dense_backward_loop<S>(d_x_loop, d_w_loop, d_b_loop, d_y, x, w);
  EXPECT_LE((d_x_fast - d_x_loop).cwiseAbs().maxCoeff(), tolerance);
  EXPECT_LE((d_w_fast - d_w_loop).cwiseAbs().maxCoeff(), tolerance);
  EXPECT_LE((d_b_fast - d_b_loop).cwiseAbs().maxCoeff(), tolerance);

  MatX<S> d_w_params = d_w0;
  VecX<S> d_b_params = d_b0;
  dense_backward_params<S>(d_w_params, d_b_params, d_y, x);
  EXPECT_LE((d_w_params - d_w_loop).cwiseAbs().maxCoeff(), tolerance);
  EXPECT_LE((d_b_params - d_b_loop).cwiseAbs().maxCoeff(), tolerance);
}

// Reference: the loop versions (STYLE.md rule 10). Tolerances: accumulated rounding of a
// dot product of length <= 300 over values in [-1, 1] (common practice, no source).
TEST(DenseLayer, EigenMatchesLoopsInDouble) {
  const std::uint64_t seed = testing::test_seed(11);
  check_against_loops<double>(3, 4, 5, 1e-12, seed);
  check_against_loops<double>(1, 2, 1, 1e-12, seed + 1);
  check_against_loops<double>(70, 33, 130, 1e-11, seed + 2);
}

TEST(DenseLayer, EigenMatchesLoopsInFloat) {
  const std::uint64_t seed = testing::test_seed(12);
  check_against_loops<float>(3, 4, 5, 1e-5, seed);
  // Large enough that Eigen hands the products to BLAS.
  check_against_loops<float>(300, 257, 129, 2e-4, seed + 1);
}

TEST(DenseLayer, WorksOnColumnBlocksOfALargerWorkspace) {
  std::mt19937_64 engine(testing::test_seed(13));
  const MatX<double> x = random_matrix<double>(4, 10, engine);
  const MatX<double> w = random_matrix<double>(3, 4, engine);
  const VecX<double> b = random_matrix<double>(3, 1, engine);
  MatX<double> workspace = MatX<double>::Constant(3, 10, 99.0);
  dense_forward<double>(workspace.leftCols(6), x.leftCols(6), w, b);
  MatX<double> expected(3, 6);
  dense_forward_loop<double>(expected, x.leftCols(6), w, b);
  EXPECT_LE((workspace.leftCols(6) - expected).cwiseAbs().maxCoeff(), 1e-12);
  EXPECT_EQ(workspace(0, 6), 99.0);  // columns past the batch untouched
}

}  // namespace
}  // namespace credence
