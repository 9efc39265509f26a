// SPDX-License-Identifier: MIT
#pragma once
// Plain option structs that hold everything a case file (TOML) says, with the
// defaults a case gets when it leaves a key out. The contract for the keys is
// docs/case-file.md; the reader is casefile/case_reader.h. Every struct keeps the
// SourceLocation of its table so that later stages can name file, line and key.
#include <map>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "sigmatube/core/error.h"

// Layer casefile/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::casefile {

/// Where each key of one table was written, so that a later stage (model factory,
/// validation against the model, expression compiler) can point at the exact line.
/// Keys are the table's own keys ("radius", "applies_to"); `of` falls back to the
/// table's location for a key that was not written (its default applies).
struct KeyLocations {
  std::map<std::string, SourceLocation> keys;
  SourceLocation of(const std::string& key, const SourceLocation& table) const {
    auto it = keys.find(key);
    if (it != keys.end()) return it->second;
    SourceLocation fallback = table;
    fallback.key = table.key.empty() ? key : table.key + "." + key;
    return fallback;
  }
};

/// An expression written in the case file, with where it was written.
struct NamedExpression {
  std::string name;  // state, output or constraint name the expression defines
  std::string text;
  SourceLocation where;
};

/// A named number, kept in file order, with where it was written.
struct NamedValue {
  std::string name;
  double value = 0.0;
  SourceLocation where;
};

/// [model]: either a built-in (builtin non-empty) or an expression model.
struct ModelOptions {
  std::string builtin;                     // "" = expression model (or plugin)
  std::string plugin;                      // [model] plugin as written ("" = none)
  std::string plugin_path;                 // resolved against the case file's folder
  std::vector<std::string> states;         // expression model only
  std::vector<std::string> inputs;         // expression model only
  std::vector<NamedValue> parameters;      // built-in, plugin: overrides by name; expression: all parameters
  std::vector<NamedExpression> rhs;        // expression model: d(state)/dt, one per state
  std::vector<NamedExpression> outputs;    // derived outputs, optional
  // `units = { name = "unit", … }`: unit text per state, input or derived output
  // (text = the unit); a built-in's own units apply where none is given.
  std::vector<NamedExpression> units;
  SourceLocation where;
  KeyLocations key_where;
};

enum class Interpolation { linear, cubic };

/// [plan]
struct PlanOptions {
  std::string file;  // as written in the case file
  std::string path;  // resolved against the case file's folder
  Interpolation interpolation = Interpolation::linear;
  SourceLocation where;
  KeyLocations key_where;
};

enum class ControlLaw { lqr, gain, open_loop };

struct InputLimit {
  std::string input;
  double low = 0.0;
  double high = 0.0;
  SourceLocation where;
};

/// [control]
struct ControlOptions {
  ControlLaw law = ControlLaw::open_loop;
  std::vector<double> q;                  // LQR state weights (diagonal), one per state
  std::vector<double> r;                  // LQR input weights (diagonal), one per input
  std::vector<std::vector<double>> gain;  // law = gain: rows = inputs, columns = states; u = u_ff - K (x - x_ref)
  // LQR: true = time-varying gains from the backward Riccati differential equation
  // along the plan, -dP/dt = AᵀP + PA - PBR⁻¹BᵀP + Q, P(t_end) = P_terminal;
  // false = one gain from the algebraic Riccati equation at the plan's first point.
  bool time_varying = true;
  std::vector<InputLimit> limits;         // saturation of the applied input
  SourceLocation where;
  KeyLocations key_where;
};

enum class IntegratorKind { dopri5, rk4 };

/// [simulation]
struct SimulationOptions {
  IntegratorKind integrator = IntegratorKind::dopri5;
  double step_in_seconds = 1.0;  // rk4: the step; dopri5: the largest step
  double rtol = 1e-8;            // dopri5: err_i ≤ atol + rtol·max(|x_i|, |x_i_new|)
  double atol = 1e-10;
  double report_every_in_seconds = 0.0;  // 0 = report at the plan's times
  SourceLocation where;
  KeyLocations key_where;
};

enum class DistributionKind {
  normal,
  uniform,
  beta,
  gamma,
  lognormal,
  truncated_normal,
  triangular,
  gaussian_process
};

enum class KernelKind { exponential, squared_exponential };

/// One [[uncertain]] entry. Which numeric fields matter depends on `distribution`:
///   normal            mean and std, one value per applies_to target (independent
///                     components), or mean vector + covariance (std then empty)
///   uniform           low, high
///   beta              alpha, beta, low, high
///   gamma             shape, scale            (mean = shape·scale)
///   lognormal         mu, sigma               (of the logarithm)
///   truncated-normal  mean, std, low, high
///   triangular        low, mode, high
///   gaussian-process  kernel, std, correlation_time, modes | energy
struct UncertainOptions {
  std::string name;
  std::vector<std::string> applies_to;  // targets such as "initial.x"; a vector normal has one per component
  DistributionKind distribution = DistributionKind::normal;
  std::vector<double> mean;             // scalar normal: one value
  std::vector<double> std;              // normal: one per target; truncated-normal, gaussian-process: one value
  std::vector<std::vector<double>> covariance;
  double low = 0.0, high = 0.0, mode = 0.0;
  double alpha = 0.0, beta = 0.0;
  double shape = 0.0, scale = 0.0;
  double mu = 0.0, sigma = 0.0;
  KernelKind kernel = KernelKind::exponential;
  double correlation_time_in_seconds = 0.0;  // key `correlation_time`
  int modes = 0;         // > 0: keep this many Karhunen–Loève modes
  double energy = 0.0;   // in (0, 1]: keep the fewest modes that capture this variance fraction
  SourceLocation where;
  KeyLocations key_where;
};

enum class ConstraintKind {
  outside_sphere,
  outside_ellipsoid,
  inside_box,
  inside_cone,
  half_space,
  input_limit,
  expression
};

enum class ConstraintScope { path, pointwise };

/// One [[constraint]] entry; fields used depend on `type` (docs/case-file.md).
struct ConstraintOptions {
  std::string name;
  ConstraintKind type = ConstraintKind::outside_sphere;
  std::vector<std::string> position;  // output names forming p
  std::vector<double> center;         // sphere, ellipsoid
  double radius = 0.0;                // sphere
  std::vector<double> semi_axes;      // ellipsoid
  std::vector<double> low, high;      // box (vectors); input-limit uses low[0], high[0]
  std::vector<double> apex, axis;     // cone
  double half_angle_deg = 0.0;        // cone
  std::vector<double> normal;         // half-space: safe where normal·p ≤ offset
  double offset = 0.0;
  std::string input;                  // input-limit: the input name
  std::string clearance;              // expression: clearance ≥ 0 is safe
  std::optional<std::pair<double, double>> window_in_seconds;  // empty = the whole plan
  double max_probability = 1e-3;      // in (0, 1); required in the case file (no default there)
  ConstraintScope scope = ConstraintScope::path;
  SourceLocation where;
  KeyLocations key_where;
};

enum class SurrogateMethod { sparse_grid, tensor_grid, regression, adaptive_sparse_grid, sparse_regression };
enum class RegressionDesign { sobol, latin_hypercube };

/// How surrogate samples are drawn: "precision" — scrambled Sobol replicates
/// until every probability's standard error meets the target
/// (constraints::stream_to_precision), `samples` the cap; "fixed" — exactly
/// `samples` pseudo-random points.
enum class SurrogateSampling { precision, fixed };

/// [surrogate]
struct SurrogateOptions {
  SurrogateMethod method = SurrogateMethod::sparse_grid;
  int degree = 3;              // total degree of the basis (regression, tensor-grid)
  int level = 3;               // Smolyak level (sparse-grid)
  double q_norm = 1.0;         // hyperbolic index set ‖α‖_q ≤ degree; 1 = total degree
  bool adaptive = false;       // raise level/degree until every error estimate < tolerance
  double tolerance = 1e-3;     // relative error estimate per output
  int max_model_runs = 2000;
  long long samples = 1000000; // surrogate samples for probabilities: the cap with "precision" sampling
  SurrogateSampling sampling = SurrogateSampling::precision;
  double sampling_relative_error = 0.01;  // precision: standard error ≤ this × probability, or
  double sampling_absolute_error = 0.05;  // ≤ this × the constraint's max_probability
  double oversampling = 2.0;   // regression: runs = ceil(oversampling · basis size); the reader requires ≥ 2
  RegressionDesign design = RegressionDesign::sobol;
  bool nested = false;         // sparse-grid: nested Clenshaw–Curtis for uniform (Legendre) germs
  SourceLocation where;
  KeyLocations key_where;
};

/// [montecarlo]
struct MonteCarloOptions {
  long long runs = 2000;                 // 0 disables the cross-check
  unsigned long long seed = 20261201ULL;
  double confidence = 0.95;              // two-sided, for Clopper–Pearson intervals
  // Paired cross-check (montecarlo/agreement.h): family-wise false-alarm rate of the
  // McNemar tests over all constraints (Holm), and the relative difference between
  // surrogate and model probability that counts as practically relevant.
  double false_alarm_level = 1e-3;
  double relative_tolerance = 0.2;
  // Rare events (importance sampling): target coefficient of variation and the most
  // full-model runs spent per constraint to reach it.
  double cov_target = 0.1;
  long long rare_event_runs = 5000;
  SourceLocation where;
  KeyLocations key_where;
};

/// [tube]: the deterministic tube bound (model/deterministic_tube.h).
struct TubeOptions {
  std::vector<std::string> position;  // state names forming p
  double sigma = 3.0;                 // unbounded inputs are cut at mean ± sigma·std (an assumption)
  SourceLocation where;
  KeyLocations key_where;
};

/// A whole case file.
/// [limits]: sizes that `check` (and every command that reads the case)
/// enforces before any work (docs/case-file.md, "Limits"). Each may be raised
/// in the case file where a machine can afford it.
struct LimitOptions {
  long long max_samples = 1'000'000'000;    // [surrogate].samples (or --samples)
  double max_sample_values = 1e12;          // samples × report times × outputs
  long long max_runs = 10'000'000;          // model runs: surrogate design + Monte Carlo
  long long max_report_times = 1'000'000;   // report times of one run
  double max_steps = 1e8;                   // integration steps of one run: plan length / step
  double max_memory_gib = 16.0;             // estimated peak memory of a run
  SourceLocation where;
  KeyLocations key_where;
};

/// Expressions (rhs, outputs, clearance): fixed limits, not overridable (they
/// protect the expression compiler, whose recursion depth follows the nesting).
constexpr std::size_t kMaxExpressionLength = 10'000;  // characters
constexpr int kMaxExpressionDepth = 100;              // nested parentheses

struct CaseOptions {
  std::string title;
  std::string path;  // the case file as given
  ModelOptions model;
  PlanOptions plan;
  ControlOptions control;
  SimulationOptions simulation;
  std::vector<UncertainOptions> uncertain;
  std::vector<ConstraintOptions> constraints;
  SurrogateOptions surrogate;
  MonteCarloOptions montecarlo;
  std::optional<TubeOptions> tube;  // absent: no deterministic tube
  LimitOptions limits;
};

}  // namespace sigmatube::casefile
