// SPDX-License-Identifier: MIT
#pragma once
// The germ: every uncertain input of a case mapped onto independent standardized
// variables ξ = (ξ_1 … ξ_d), each of a Wiener–Askey family (germ/family.h), and
// the map back from ξ to the physical perturbation of one closed-loop run.
//
//   normal (scalar)        hermite,  x = mean + std·ξ
//   normal (vector)        hermite,  x = mean + L ξ,  L Lᵀ = covariance (Cholesky)
//   uniform                legendre, x = (low+high)/2 + (high-low)/2 · ξ
//   beta                   jacobi,   a = beta-1, b = alpha-1,  x = low + (high-low)(ξ+1)/2
//   gamma                  laguerre, a = shape-1,  x = scale·ξ
//   lognormal, truncated-normal, triangular
//                          isoprobabilistic map x = F⁻¹(Φ(ξ)) from a hermite ξ
//                          (Rosenblatt, Ann. Math. Stat. 23, 1952; docs/methods.md
//                          says why hermite), except:
//   truncated-normal whose density is nearly flat on its window,
//   min φ / max φ ≥ kFlatTruncationRatio:
//                          legendre, x = F⁻¹((ξ + 1)/2) (converges faster there,
//                          measured in docs/methods.md, "Germ")
//   gaussian-process       Karhunen–Loève on the report grid, one hermite ξ per
//                          mode, named "name[k]" (germ/karhunen_loeve.h)
//
// Germ names (one per dimension, written to /germ/names): a scalar input is
// named by its `name`; a vector normal and a gaussian-process by "name[k]",
// k = 0, 1, … (vector component k, or KL mode k, largest variance first).
//
// Targets (`applies_to`, "<kind>.<name>"):
//   initial.<state>       x is added to Perturbation::initial_offset
//   parameter.<name>      x replaces Perturbation::parameters
//   input_scale.<input>   x replaces Perturbation::input_scale (x is the scale, e.g. 0.97…1.03)
//   input_bias.<input>    x is added to Perturbation::input_bias
//   disturbance.<state>   x is added to that state's column of Perturbation::disturbance
//                         (a scalar input: the same x at every grid time; a
//                         gaussian-process: its KL sum at each grid time)
// A scalar input names exactly one target, a vector normal one per component, a
// gaussian-process exactly one disturbance.<state>. parameter and input_scale
// targets replace a value, so at most one input may name each of them.
#include <cstdint>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/germ/family.h"
#include "sigmatube/model/closed_loop.h"

// Layer germ/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::germ {

/// A truncated normal whose density over [low, high] varies by less than this
/// factor (min/max) gets a uniform (legendre) germ instead of a hermite one.
inline constexpr double kFlatTruncationRatio = 0.2;

/// What the Karhunen–Loève truncation of one gaussian-process input kept.
struct KarhunenLoeveSummary {
  std::string input_name;
  int modes = 0;
  double captured_variance_fraction = 0.0;  // Σ kept λ / Σ all λ of the discrete operator
};

/// What `applies_to` can name, and the grid a gaussian-process input lives on.
struct TargetSpace {
  std::vector<std::string> states, inputs, parameters;
  std::vector<double> disturbance_times;  // = ClosedLoop::disturbance_times()
};

/// The state, input and parameter names of closed_loop.model() and its
/// disturbance grid (src/germ/target_space.cpp, the only germ file that needs ClosedLoop).
TargetSpace targets_of(const model::ClosedLoop& closed_loop);

/// The physical value one germ point gives one target, for reports.
struct PhysicalValue {
  std::string input;   // the [[uncertain]] name
  std::string target;  // as written in applies_to, e.g. "initial.x"
  double value = 0.0;
};

class Germ {
 public:
  /// Builds the germ for a case. `targets` supplies the state, input and
  /// parameter names for `applies_to` targets and the report grid for KL modes
  /// (make it with targets_of(closed_loop)). Throws InputError (naming the
  /// [[uncertain]] entry) for an unknown target, a covariance that is not
  /// symmetric positive definite, etc.
  static Germ build(const std::vector<casefile::UncertainOptions>& inputs, const TargetSpace& targets);

  int dimension() const { return static_cast<int>(specs_.size()); }
  const std::vector<FamilySpec>& specs() const { return specs_; }
  const std::vector<std::string>& names() const { return names_; }
  const std::vector<KarhunenLoeveSummary>& karhunen_loeve() const { return kl_; }
  /// The [[uncertain]] names in case-file order, and the germ dimensions of each
  /// (one for a scalar input, one per component or Karhunen–Loève mode otherwise).
  std::vector<std::string> input_names() const;
  std::vector<std::vector<int>> input_dimensions() const;

  /// Writes the perturbation for germ point xi (dimension() values) into
  /// `perturbation`, which must start as closed_loop.nominal() (apply adds to
  /// offsets, biases and disturbances, so a reused perturbation must be reset
  /// first). An empty disturbance is sized [n_times, n_states] and zeroed the
  /// first time a disturbance target needs it; otherwise apply does not
  /// allocate. Thread-safe (const, no shared scratch). Throws std::logic_error
  /// if the perturbation's sizes do not match the TargetSpace of build().
  void apply(const double* xi, model::Perturbation& perturbation) const;

  /// ξ_j = from_standard_normal(spec_j, z_j) for all j.
  void from_standard_normal(const double* z, double* xi) const;

  /// z_j = CounterRng(seed).normal(sample, j), j < dimension(): the standard
  /// normal point of one sample, independent of the order samples are drawn in.
  void sample_standard_normal(std::uint64_t seed, std::uint64_t sample, double* z) const;

  /// The physical value of every scalar and vector-normal target at germ point
  /// xi, in input order (gaussian-process inputs are left out: their value is a
  /// whole time series).
  std::vector<PhysicalValue> physical_values(const double* xi) const;

  /// The KL basis of gaussian-process input `index` into karhunen_loeve():
  /// column k = √λ_k φ_k(t_i) on the disturbance grid, [n_times, modes].
  const Eigen::MatrixXd& karhunen_loeve_basis(int index) const;

 private:
  enum class TargetKind { initial, parameter, input_scale, input_bias, disturbance };
  struct Target {
    TargetKind kind = TargetKind::initial;
    int index = 0;
    std::string text;
  };
  // How one scalar germ variable becomes a physical value.
  enum class MapKind { affine, lognormal, truncated_normal, triangular };
  struct ScalarMap {
    MapKind kind = MapKind::affine;
    double offset = 0.0, slope = 1.0;      // affine: x = offset + slope·ξ; truncated: mean, std
    double low = 0.0, mode = 0.0, high = 0.0;  // truncated normal, triangular bounds
    double mu = 0.0, sigma = 0.0;          // lognormal
    bool uniform_germ = false;             // truncated normal: ξ ~ U(-1, 1) instead of N(0, 1)
    double value(double xi) const;
  };
  enum class BlockKind { scalar, vector_normal, karhunen_loeve };
  // One [[uncertain]] entry: germ dimensions [first, first + size).
  struct Block {
    BlockKind kind = BlockKind::scalar;
    std::string input;
    int first = 0, size = 1;
    ScalarMap map;              // scalar
    Eigen::VectorXd mean;       // vector normal
    Eigen::MatrixXd factor;     // vector normal: lower Cholesky factor L; KL: √λ_k φ_k(t_i)
    std::vector<Target> targets;
  };
  static void add_to_target(const Target& target, double x, int n_times, model::Perturbation& perturbation);

  std::vector<FamilySpec> specs_;
  std::vector<std::string> names_;
  std::vector<KarhunenLoeveSummary> kl_;
  std::vector<int> kl_blocks_;  // block index of each karhunen_loeve() entry
  std::vector<Block> blocks_;
  int n_states_ = 0, n_inputs_ = 0, n_parameters_ = 0, n_times_ = 0;
  bool needs_disturbance_ = false;
};

/// Germ points (rows, [n, germ.dimension()]) for standard-normal points z
/// (rows): row i = germ.from_standard_normal(z.row(i)).
Eigen::MatrixXd germ_points(const Germ& germ, const Eigen::MatrixXd& z);

/// n standard-normal points (rows, [n, d]) of samples first, …, first + n − 1:
/// z(i, j) = rng.normal(first + i, j), independent of how the samples are split.
Eigen::MatrixXd standard_normal_points(const CounterRng& rng, long long first, Eigen::Index n, int d);

}  // namespace sigmatube::germ
