// SPDX-License-Identifier: MIT
// Clearance functions against hand-computed signed distances (closed-form geometry).
#include "sigmatube/constraints/constraint.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <thread>

#include "sigmatube/core/error.h"

namespace sigmatube::constraints {
namespace {
using casefile::ConstraintKind;
using casefile::ConstraintOptions;

// Hand-computed values below are exact up to a few roundings of sqrt and trig.
constexpr double kTolerance = 1e-12;

const std::vector<std::string> kOutputs = {"x", "y", "z", "vx", "speed", "cmd.ax"};

// Rows of points (x, y, z); other outputs get the values given or 0.
Eigen::MatrixXd block_of(const std::vector<std::vector<double>>& rows) {
  Eigen::MatrixXd block = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(rows.size()), 6);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    for (std::size_t j = 0; j < rows[i].size(); ++j) block(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = rows[i][j];
  }
  return block;
}

Eigen::VectorXd clearance_of(const Constraint& c, const Eigen::MatrixXd& block, double t = 0.0) {
  Eigen::VectorXd out(block.rows());
  c.clearance(block, t, out);
  return out;
}

ConstraintOptions base(ConstraintKind kind) {
  ConstraintOptions o;
  o.name = "test";
  o.type = kind;
  o.position = {"x", "y", "z"};
  o.where = {"case.toml", 12, "constraint.test"};
  return o;
}

TEST(Constraint, OutsideSphereIsDistanceMinusRadius) {
  auto o = base(ConstraintKind::outside_sphere);
  o.center = {1, 2, 3};
  o.radius = 2.0;
  const Constraint c(o, kOutputs);
  // (4, 6, 3): distance 5 → 3 outside; (1, 2, 5): on the sphere; centre: −2.
  const auto v = clearance_of(c, block_of({{4, 6, 3}, {1, 2, 5}, {1, 2, 3}}));
  EXPECT_NEAR(v[0], 3.0, kTolerance);
  EXPECT_NEAR(v[1], 0.0, kTolerance);
  EXPECT_NEAR(v[2], -2.0, kTolerance);
}

TEST(Constraint, OutsideEllipsoidHasExactSignAndScalesBySmallestSemiAxis) {
  auto o = base(ConstraintKind::outside_ellipsoid);
  o.center = {0, 0, 0};
  o.semi_axes = {4, 2, 1};
  const Constraint c(o, kOutputs);
  // (8,0,0): ‖D⁻¹p‖ = 2 → (2−1)·1 = 1; (0,2,0): on the surface; (0,0,0.5): (0.5−1)·1 = −0.5.
  const auto v = clearance_of(c, block_of({{8, 0, 0}, {0, 2, 0}, {0, 0, 0.5}}));
  EXPECT_NEAR(v[0], 1.0, kTolerance);
  EXPECT_NEAR(v[1], 0.0, kTolerance);
  EXPECT_NEAR(v[2], -0.5, kTolerance);
  // Never overstates the true distance: (8,0,0) is 4 from the surface, clearance 1 ≤ 4.
  EXPECT_LE(v[0], 4.0);
}

TEST(Constraint, InsideBoxIsSignedDistanceIncludingOutsideCorner) {
  auto o = base(ConstraintKind::inside_box);
  o.low = {0, 0, 0};
  o.high = {10, 4, 2};
  const Constraint c(o, kOutputs);
  // Inside (3,1,1.5): min(3,7,1,3,1.5,0.5) = 0.5. Face (10,2,1): 0. Outside corner
  // (13,8,2): −‖(3,4,0)‖ = −5. Outside a face (5,2,−1): −1.
  const auto v = clearance_of(c, block_of({{3, 1, 1.5}, {10, 2, 1}, {13, 8, 2}, {5, 2, -1}}));
  EXPECT_NEAR(v[0], 0.5, kTolerance);
  EXPECT_NEAR(v[1], 0.0, kTolerance);
  EXPECT_NEAR(v[2], -5.0, kTolerance);
  EXPECT_NEAR(v[3], -1.0, kTolerance);
}

TEST(Constraint, InsideConeIsSignedDistanceToTheSurface) {
  auto o = base(ConstraintKind::inside_cone);
  o.apex = {0, 0, 0};
  o.axis = {0, 0, 2};  // not unit on purpose
  o.half_angle_deg = 45.0;
  const Constraint c(o, kOutputs);
  const double s = std::sqrt(0.5);
  // On the axis at height 2: distance to the 45° surface 2·sin45 = √2. On the
  // surface (1,0,1): 0. Outside (2,0,0): perpendicular to generator, 2·sin45 = √2 → −√2.
  // Behind the apex (0,0,−3): nearest point is the apex → −3. (0,1,−0.5): h cos + ρ sin
  // = (−0.5 + 1)·s > 0 → −(ρ cos − h sin) = −(1 + 0.5)·s.
  const auto v = clearance_of(c, block_of({{0, 0, 2}, {1, 0, 1}, {2, 0, 0}, {0, 0, -3}, {0, 1, -0.5}}));
  EXPECT_NEAR(v[0], 2.0 * s, kTolerance);
  EXPECT_NEAR(v[1], 0.0, kTolerance);
  EXPECT_NEAR(v[2], -2.0 * s, kTolerance);
  EXPECT_NEAR(v[3], -3.0, kTolerance);
  EXPECT_NEAR(v[4], -1.5 * s, kTolerance);
}

TEST(Constraint, HalfSpaceIsOffsetMinusNormalDotPOverNorm) {
  auto o = base(ConstraintKind::half_space);
  o.normal = {3, 0, 4};
  o.offset = 10.0;
  const Constraint c(o, kOutputs);
  // (offset − n·p)/|n|: p = (0,7,0) → 10/5 = 2; p = (2,0,1): (10 − 10)/5 = 0; p = (5,0,5): (10−35)/5 = −5.
  const auto v = clearance_of(c, block_of({{0, 7, 0}, {2, 0, 1}, {5, 0, 5}}));
  EXPECT_NEAR(v[0], 2.0, kTolerance);
  EXPECT_NEAR(v[1], 0.0, kTolerance);
  EXPECT_NEAR(v[2], -5.0, kTolerance);
}

TEST(Constraint, InputLimitReadsTheCommandedInput) {
  ConstraintOptions o;
  o.name = "thrust";
  o.type = ConstraintKind::input_limit;
  o.input = "ax";
  o.low = {-0.02};
  o.high = {0.03};
  const Constraint c(o, kOutputs);
  auto block = block_of({{0, 0, 0, 0, 0, 0.01}, {0, 0, 0, 0, 0, 0.05}, {0, 0, 0, 0, 0, -0.02}});
  const auto v = clearance_of(c, block);
  EXPECT_NEAR(v[0], 0.02, kTolerance);   // min(0.03, 0.02)
  EXPECT_NEAR(v[1], -0.02, kTolerance);  // above the high limit by 0.02
  EXPECT_NEAR(v[2], 0.0, kTolerance);
}

TEST(Constraint, ExpressionUsesAliasesAndTime) {
  ConstraintOptions o;
  o.name = "expr";
  o.type = ConstraintKind::expression;
  o.clearance = "100 - x^2 - y^2 - t*cmd_ax";
  const Constraint c(o, kOutputs);
  auto block = block_of({{3, 4, 0, 0, 0, 1}, {6, 8, 0, 0, 0, 2}});
  const auto v = clearance_of(c, block, 5.0);
  EXPECT_NEAR(v[0], 100 - 25 - 5, kTolerance);
  EXPECT_NEAR(v[1], 100 - 100 - 10, kTolerance);
  EXPECT_EQ(expression_alias("cmd.ax"), "cmd_ax");
}

TEST(Constraint, ExpressionIsSafeFromSeveralThreads) {
  ConstraintOptions o;
  o.name = "expr";
  o.type = ConstraintKind::expression;
  o.clearance = "x - 2*y + t";
  const Constraint c(o, kOutputs);
  constexpr int kRows = 2000;
  auto worker = [&](double shift, bool* ok) {
    Eigen::MatrixXd block = Eigen::MatrixXd::Zero(kRows, 6);
    for (int i = 0; i < kRows; ++i) {
      block(i, 0) = i + shift;
      block(i, 1) = 0.5 * i;
    }
    *ok = true;
    for (int rep = 0; rep < 50; ++rep) {
      Eigen::VectorXd v(kRows);
      c.clearance(block, rep, v);
      for (int i = 0; i < kRows; ++i) *ok = *ok && v[i] == shift + rep;
    }
  };
  bool ok1 = false, ok2 = false;
  std::thread a(worker, 1.0, &ok1), b(worker, 7.0, &ok2);
  a.join();
  b.join();
  EXPECT_TRUE(ok1);
  EXPECT_TRUE(ok2);
}

TEST(Constraint, ConstantExpressionFillsEveryRow) {
  ConstraintOptions o;
  o.name = "const";
  o.type = ConstraintKind::expression;
  o.clearance = "2.5";
  const Constraint c(o, kOutputs);
  const auto v = clearance_of(c, block_of({{1}, {2}, {3}}));
  EXPECT_EQ(v, Eigen::VectorXd::Constant(3, 2.5));
}

TEST(Constraint, DottedNameInExpressionPointsToTheAlias) {
  ConstraintOptions o;
  o.name = "expr";
  o.type = ConstraintKind::expression;
  o.clearance = "0.03 - cmd.ax";
  try {
    Constraint c(o, kOutputs);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("cmd_ax"), std::string::npos) << e.what();
  }
}

TEST(Constraint, ExpressionSyntaxErrorNamesThePosition) {
  ConstraintOptions o;
  o.name = "expr";
  o.type = ConstraintKind::expression;
  o.clearance = "x + * y";
  o.where = {"case.toml", 40, "constraint.expr"};
  try {
    Constraint c(o, kOutputs);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().line, 40);
    EXPECT_NE(std::string(e.what()).find("position 4"), std::string::npos) << e.what();  // the '*', counted from 0
    std::printf("%s\n", e.what());
    EXPECT_NE(std::string(e.what()).find("clearance"), std::string::npos) << e.what();
  }
}

TEST(Constraint, UnknownOutputIsAnInputErrorAtTheConstraint) {
  auto o = base(ConstraintKind::outside_sphere);
  o.position = {"x", "y", "altitude"};
  o.center = {0, 0, 0};
  o.radius = 1;
  try {
    Constraint c(o, kOutputs);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().line, 12);
    EXPECT_NE(std::string(e.what()).find("altitude"), std::string::npos);
  }
  ConstraintOptions limit;
  limit.name = "lim";
  limit.type = ConstraintKind::input_limit;
  limit.input = "ay";
  limit.low = {-1};
  limit.high = {1};
  EXPECT_THROW(Constraint(limit, kOutputs), InputError);
}

TEST(Constraint, WindowDefaultsToTheWholeGridAndIsClosed) {
  auto o = base(ConstraintKind::half_space);
  o.normal = {1, 0, 0};
  const Constraint whole(o, kOutputs);
  EXPECT_TRUE(whole.in_window(-1e9));
  EXPECT_TRUE(whole.in_window(1e9));
  o.window_in_seconds = std::make_pair(10.0, 20.0);
  const Constraint window(o, kOutputs);
  EXPECT_TRUE(window.in_window(10.0));
  EXPECT_TRUE(window.in_window(20.0));
  EXPECT_FALSE(window.in_window(9.9));
  EXPECT_FALSE(window.in_window(20.1));
}

// The column-wise kernels (positions of 2 and 3 coordinates) against the
// definitions written with Eigen vectors row by row, as the general path does:
// the same IEEE operations in the same order, so equal bit for bit (memcmp).
// Points spread over all sides of each shape, behind the cone's apex too.
TEST(Constraint, ColumnKernelsEqualTheRowFormulasBitForBit) {
  const std::vector<std::string> outputs = {"x", "y", "z", "w"};
  std::uint64_t state = 0x2545F4914F6CDD1DULL;  // fixed-seed xorshift (common practice)
  auto uniform = [&] {
    state ^= state << 13;
    state ^= state >> 7;
    state ^= state << 17;
    return static_cast<double>(state >> 11) * 0x1.0p-53 * 40.0 - 20.0;
  };
  const Eigen::Index rows = 1001;  // odd: the vector loops' remainders too
  Eigen::MatrixXd block(rows, 4);
  for (Eigen::Index i = 0; i < rows; ++i)
    for (int j = 0; j < 4; ++j) block(i, j) = uniform();
  for (const std::vector<std::string> position : {std::vector<std::string>{"x", "y"}, {"x", "z", "w"}}) {
    const std::size_t n = position.size();
    const std::vector<Eigen::Index> columns = n == 2 ? std::vector<Eigen::Index>{0, 1} : std::vector<Eigen::Index>{0, 2, 3};
    auto vec = [&](std::initializer_list<double> v) { return std::vector<double>(v.begin(), v.begin() + n); };
    for (ConstraintKind kind : {ConstraintKind::outside_sphere, ConstraintKind::outside_ellipsoid,
                                ConstraintKind::inside_cone, ConstraintKind::half_space}) {
      ConstraintOptions o = base(kind);
      o.position = position;
      o.center = vec({1.5, -2.25, 0.75});
      o.radius = 7.0;
      o.semi_axes = vec({6.0, 3.5, 2.0});
      o.apex = vec({0.5, -1.0, 2.0});
      o.axis = vec({0.3, -1.0, 0.2});
      o.half_angle_deg = 20.0;
      o.normal = vec({3.0, -4.0, 1.5});
      o.offset = 2.5;
      const Constraint c(o, outputs);
      const Eigen::VectorXd fast = clearance_of(c, block);
      // Row formulas with dynamic Eigen vectors (the definitions of docs/case-file.md).
      const Eigen::Map<const Eigen::VectorXd> center(o.center.data(), static_cast<Eigen::Index>(n));
      const Eigen::Map<const Eigen::VectorXd> semi(o.semi_axes.data(), static_cast<Eigen::Index>(n));
      const Eigen::Map<const Eigen::VectorXd> apex(o.apex.data(), static_cast<Eigen::Index>(n));
      const Eigen::Map<const Eigen::VectorXd> normal(o.normal.data(), static_cast<Eigen::Index>(n));
      const Eigen::VectorXd axis = Eigen::Map<const Eigen::VectorXd>(o.axis.data(), static_cast<Eigen::Index>(n));
      const Eigen::VectorXd axis_unit = axis / axis.norm();
      const Eigen::VectorXd inverse = semi.cwiseInverse();
      const double pi = 3.14159265358979323846;
      const double sin_half = std::sin(o.half_angle_deg * pi / 180.0), cos_half = std::cos(o.half_angle_deg * pi / 180.0);
      Eigen::VectorXd slow(rows), p(static_cast<Eigen::Index>(n));
      for (Eigen::Index i = 0; i < rows; ++i) {
        for (std::size_t k = 0; k < n; ++k) p[static_cast<Eigen::Index>(k)] = block(i, columns[k]);
        switch (kind) {
          case ConstraintKind::outside_sphere: slow[i] = (p - center).norm() - o.radius; break;
          case ConstraintKind::outside_ellipsoid:
            slow[i] = ((p - center).cwiseProduct(inverse).norm() - 1.0) * semi.minCoeff();
            break;
          case ConstraintKind::inside_cone: {
            const Eigen::VectorXd v = p - apex;
            const double h = v.dot(axis_unit);
            const double rho = (v - h * axis_unit).norm();
            const double across = h * sin_half - rho * cos_half;
            slow[i] = across >= 0.0 || h * cos_half + rho * sin_half >= 0.0 ? across : -v.norm();
            break;
          }
          default: slow[i] = (o.offset - normal.dot(p)) / normal.norm(); break;
        }
      }
      EXPECT_EQ(std::memcmp(fast.data(), slow.data(), sizeof(double) * static_cast<std::size_t>(rows)), 0)
          << kind_name(kind) << " with " << n << " coordinates";
    }
  }
}

// A constraint moved to a block that holds only the outputs it reads gives the
// same clearances as on the full block.
TEST(Constraint, WithOutputColumnsReadsTheCompactBlock) {
  auto o = base(ConstraintKind::outside_sphere);
  o.position = {"y", "vx", "z"};
  o.center = {1, 2, 3};
  o.radius = 2.0;
  const Constraint c(o, kOutputs);
  const Eigen::MatrixXd full = block_of({{0, 4, 6, 3, 9, 9}, {7, 1, 2, 5, 9, 9}, {-1, 1, 2, 3, 9, 9}});
  // Outputs read: y (1), z (2), vx (3) → columns 0, 1, 2 of the compact block.
  const std::vector<int> column_of = {-1, 0, 1, 2, -1, -1};
  const Eigen::MatrixXd compact = full.middleCols(1, 3);
  const Constraint moved = c.with_output_columns(column_of);
  const Eigen::VectorXd a = clearance_of(c, full), b = clearance_of(moved, compact);
  EXPECT_EQ(std::memcmp(a.data(), b.data(), sizeof(double) * 3), 0);
  // Row 0: (y, vx, z) = (4, 3, 6), minus the centre (1, 2, 3): (3, 1, 3), distance √19.
  EXPECT_NEAR(a[0], std::sqrt(19.0) - 2.0, kTolerance);
  EXPECT_THROW(c.with_output_columns({-1, 0, -1, 2, -1, -1}), std::logic_error);  // z has no column
}

}  // namespace
}  // namespace sigmatube::constraints
