// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/basis_product.h"

#include <gtest/gtest.h>

#include <cstring>
#include <random>
#include <thread>

#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"
#include "sigmatube/expansion/surrogate.h"

using namespace sigmatube::expansion;

namespace {

// The reference: the textbook sum of the matrix product, one accumulator per
// element, k ascending, s = s + a·b with the product rounded first (the order
// basis_product documents). -ffp-contract=off on this file is not needed: the
// default build enables no FMA instruction; the compiler may not reorder the sum.
Eigen::MatrixXd naive_product(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  Eigen::MatrixXd y(a.rows(), b.cols());
  for (Eigen::Index i = 0; i < a.rows(); ++i)
    for (Eigen::Index j = 0; j < b.cols(); ++j) {
      double s = 0.0;
      for (Eigen::Index k = 0; k < a.cols(); ++k) {
        const volatile double product = a(i, k) * b(k, j);  // rounded, never fused
        s = s + product;
      }
      y(i, j) = s;
    }
  return y;
}

Eigen::MatrixXd random_matrix(Eigen::Index rows, Eigen::Index cols, std::uint64_t seed) {
  std::mt19937_64 engine(seed);
  std::uniform_real_distribution<double> u(-1.0, 1.0);
  Eigen::MatrixXd m(rows, cols);
  for (Eigen::Index j = 0; j < cols; ++j)
    for (Eigen::Index i = 0; i < rows; ++i) m(i, j) = u(engine);
  return m;
}

bool same_bits(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b) {
  return a.rows() == b.rows() && a.cols() == b.cols() &&
         std::memcmp(a.data(), b.data(), static_cast<std::size_t>(a.size()) * sizeof(double)) == 0;
}

// Every instruction set the product has (the CPU may lack the wider ones: they
// then fall back, and the check runs the narrower path once more).
constexpr ProductTarget kTargets[] = {ProductTarget::baseline, ProductTarget::avx2, ProductTarget::avx512f,
                                      ProductTarget::automatic};

struct Shape {
  Eigen::Index n, p, j;
};
// Odd sizes: rows, depth and columns that are not multiples of any tile (4, 8, 24
// rows; 2, 4, 8 columns), one row block (192) and more, one depth block (256) and
// more (the partial sums are then reloaded), a single term, a single column.
constexpr Shape kShapes[] = {{1, 1, 1},    {7, 3, 5},     {25, 78, 13},   {193, 78, 604 / 8 + 3},
                             {517, 1, 9},  {385, 257, 8}, {250, 301, 17}, {31, 600, 3}};

}  // namespace

TEST(BasisProduct, SameBitsAsTheNaiveSumOnEveryInstructionSet) {
  std::uint64_t seed = 11;
  for (const Shape& s : kShapes) {
    const Eigen::MatrixXd a = random_matrix(s.n, s.p, ++seed), b = random_matrix(s.p, s.j, ++seed);
    const Eigen::MatrixXd expected = naive_product(a, b);
    for (const ProductTarget target : kTargets) {
      set_product_target(target);
      Eigen::MatrixXd y(s.n, s.j);
      basis_product(a, b, y);
      EXPECT_TRUE(same_bits(y, expected)) << product_target_name() << " " << s.n << "x" << s.p << "x" << s.j;
    }
  }
  set_product_target(ProductTarget::automatic);
}

#ifndef __FMA__
TEST(BasisProduct, SameBitsAsEigenForOneDepthBlock) {
  // Eigen 3.4 (Debian's libeigen3-dev) keeps one accumulator per element within
  // its depth block and, built without FMA, multiplies and adds separately: for
  // the depth of the bundled demo's surrogate (P = 78) its product has the same
  // bits as basis_product.
  const Eigen::MatrixXd a = random_matrix(1001, 78, 3), b = random_matrix(78, 61, 4);
  const Eigen::MatrixXd expected = a * b;
  for (const ProductTarget target : kTargets) {
    set_product_target(target);
    Eigen::MatrixXd y(a.rows(), b.cols());
    basis_product(a, b, y);
    EXPECT_TRUE(same_bits(y, expected)) << product_target_name();
  }
  set_product_target(ProductTarget::automatic);
}
#endif

TEST(BasisProduct, BlocksOfLargerMatricesAndSelectedColumns) {
  // Ψ and Y as row blocks of larger matrices (outer stride ≠ rows), C as a
  // selection of columns in a given order, and as a range of columns.
  const Eigen::MatrixXd big_psi = random_matrix(300, 40, 5), c = random_matrix(40, 30, 6);
  const std::vector<int> columns{29, 0, 7, 7, 13, 2, 28, 21, 5, 11, 3};
  Eigen::MatrixXd selected(40, static_cast<Eigen::Index>(columns.size()));
  for (std::size_t j = 0; j < columns.size(); ++j) selected.col(static_cast<Eigen::Index>(j)) = c.col(columns[j]);
  const Eigen::MatrixXd psi = big_psi.middleRows(17, 211);
  Eigen::MatrixXd big_y = Eigen::MatrixXd::Constant(400, static_cast<Eigen::Index>(columns.size()), -7.0);
  basis_product(big_psi.middleRows(17, 211), PackedColumns(c, columns), big_y.middleRows(101, 211));
  EXPECT_TRUE(same_bits(big_y.middleRows(101, 211), naive_product(psi, selected)));
  EXPECT_TRUE((big_y.topRows(101).array() == -7.0).all());  // nothing outside the block is written
  EXPECT_TRUE((big_y.bottomRows(400 - 312).array() == -7.0).all());
  Eigen::MatrixXd y(211, 9);
  basis_product(psi, PackedColumns(c, 20, 9), y);
  EXPECT_TRUE(same_bits(y, naive_product(psi, c.middleCols(20, 9))));
  EXPECT_THROW(PackedColumns(c, std::vector<int>{30}), std::logic_error);
  EXPECT_THROW(basis_product(psi, c.topRows(39), y), std::logic_error);
}

TEST(BasisProduct, SameBitsWhenTheRowsAreSplitOverTwoThreads) {
  const Eigen::MatrixXd a = random_matrix(1999, 78, 7), b = random_matrix(78, 37, 8);
  Eigen::MatrixXd one(a.rows(), b.cols()), two(a.rows(), b.cols());
  const PackedColumns packed(b);
  basis_product(a, packed, one);
  const Eigen::Index half = 1001;  // not a multiple of any tile or row block
  std::thread first([&] { basis_product(a.topRows(half), packed, two.topRows(half)); });
  std::thread second([&] { basis_product(a.bottomRows(a.rows() - half), packed, two.bottomRows(a.rows() - half)); });
  first.join();
  second.join();
  EXPECT_TRUE(same_bits(one, two));
  EXPECT_TRUE(same_bits(one, naive_product(a, b)));
}

TEST(BasisProduct, SurrogateEvaluateIsTheBasisTimesTheCoefficients) {
  // Surrogate::evaluate: basis matrix by recurrence, then the product of the
  // selected columns, against the naive sum on the same basis matrix.
  Surrogate s;
  s.families = {{sigmatube::germ::Family::hermite}, {sigmatube::germ::Family::legendre},
                {sigmatube::germ::Family::jacobi, 1.0, 2.0}};
  s.indices = total_degree_set(3, 5);  // P = 56
  s.n_times = 5;
  s.n_outputs = 3;
  s.coefficients = random_matrix(s.indices.rows(), 15, 9);
  Eigen::MatrixXd points = random_matrix(5000, 3, 10) * 0.9;  // inside the Legendre / Jacobi support
  const std::vector<int> columns{14, 3, 4, 5, 0};
  Eigen::MatrixXd values;
  s.evaluate(points, values, columns);
  Eigen::MatrixXd selected(s.indices.rows(), 5);
  for (int j = 0; j < 5; ++j) selected.col(j) = s.coefficients.col(columns[static_cast<std::size_t>(j)]);
  EXPECT_TRUE(same_bits(values, naive_product(basis_matrix(s.families, s.indices, points), selected)));
  s.evaluate(points, values);
  EXPECT_EQ(values.cols(), 15);
  EXPECT_TRUE(same_bits(values, naive_product(basis_matrix(s.families, s.indices, points), s.coefficients)));
}
