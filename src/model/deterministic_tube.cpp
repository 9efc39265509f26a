// SPDX-License-Identifier: MIT
#include "sigmatube/model/deterministic_tube.h"

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <sstream>

#include <Eigen/Eigenvalues>

#include "sigmatube/core/error.h"
#include "sigmatube/model/controller.h"
#include "sigmatube/model/lqr.h"
#include "sigmatube/model/plan.h"

namespace sigmatube::model {
namespace {

using casefile::DistributionKind;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Rate and disturbance are sampled this many times per report interval (ends
// included); the interval uses the smallest rate and the largest disturbance.
constexpr int kSamplesPerInterval = 4;
// Vertex enumeration of a box of k sources costs 2^(k−1) norms; above this the
// triangle inequality Σ b_i ‖U g_i‖ (an upper bound) is used instead.
constexpr int kMaxVertexSources = 14;
// A_cl is "time-invariant" when it moves by less than this relative amount along the plan.
constexpr double kTimeInvariantTolerance = 1e-9;
// Fractions f of the spectral abscissa tried as the shift μ = −f·α(Ā).
constexpr double kShiftFractions[] = {0.0, 0.3, 0.6, 0.8, 0.9, 0.95, 0.99};

std::string fmt(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

int index_of(const std::vector<std::string>& names, const std::string& name) {
  const auto it = std::find(names.begin(), names.end(), name);
  return it == names.end() ? -1 : static_cast<int>(it - names.begin());
}

// sup over δ ∈ [−1, 1]^k of ‖Σ_i δ_i v_i‖ for the columns v_i of V.
double box_sup_norm(const Eigen::MatrixXd& V) {
  std::vector<Eigen::Index> used;
  for (Eigen::Index i = 0; i < V.cols(); ++i)
    if (V.col(i).squaredNorm() > 0.0) used.push_back(i);
  const int k = static_cast<int>(used.size());
  if (k == 0) return 0.0;
  if (k > kMaxVertexSources) {
    double sum = 0.0;
    for (auto i : used) sum += V.col(i).norm();
    return sum;
  }
  // A convex function's maximum over a box sits at a vertex; ±δ give the same norm.
  double best = 0.0;
  Eigen::VectorXd v(V.rows());
  for (unsigned long mask = 0; mask < (1UL << (k - 1)); ++mask) {
    v = V.col(used[0]);
    for (int j = 1; j < k; ++j) v += ((mask >> (j - 1)) & 1UL) ? V.col(used[static_cast<std::size_t>(j)]).eval()
                                                                : (-V.col(used[static_cast<std::size_t>(j)])).eval();
    best = std::max(best, v.norm());
  }
  return best;
}

struct Bound {
  double low = 0.0, high = 0.0;
  bool from_sigma = false;
};

// The deviation range of one scalar input around `nominal_value`.
Bound scalar_bound(const casefile::UncertainOptions& u, double sigma, std::size_t component) {
  Bound b;
  switch (u.distribution) {
    case DistributionKind::uniform:
    case DistributionKind::beta:
    case DistributionKind::triangular:
    case DistributionKind::truncated_normal: b.low = u.low, b.high = u.high; break;
    case DistributionKind::normal: {
      const double mean = component < u.mean.size() ? u.mean[component] : 0.0;
      const double sd = !u.std.empty() ? u.std[std::min(component, u.std.size() - 1)]
                                       : std::sqrt(u.covariance[component][component]);
      b.low = mean - sigma * sd, b.high = mean + sigma * sd, b.from_sigma = true;
      break;
    }
    case DistributionKind::gaussian_process:
      b.low = -sigma * u.std.at(0), b.high = sigma * u.std.at(0), b.from_sigma = true;
      break;
    case DistributionKind::lognormal: {
      // Of the logarithm: mu ± sigma·s, mapped through exp (a quantile bound).
      b.low = std::exp(u.mu - sigma * u.sigma), b.high = std::exp(u.mu + sigma * u.sigma), b.from_sigma = true;
      break;
    }
    case DistributionKind::gamma: {
      const double mean = u.shape * u.scale, sd = std::sqrt(u.shape) * u.scale;
      b.low = std::max(0.0, mean - sigma * sd), b.high = mean + sigma * sd, b.from_sigma = true;
      break;
    }
  }
  return b;
}

// Largest eigenvalue of a symmetric matrix.
double max_eigenvalue(const Eigen::MatrixXd& S) {
  return Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(S, Eigen::EigenvaluesOnly).eigenvalues().maxCoeff();
}
double min_eigenvalue(const Eigen::MatrixXd& S) {
  return Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(S, Eigen::EigenvaluesOnly).eigenvalues().minCoeff();
}

// Everything the linearization says at one time.
struct LoopAt {
  Eigen::MatrixXd A, B, K, Acl, sources;  // sources: columns g_i·b_i of the disturbance box
  Eigen::MatrixXd scale_B;                 // B·diag(b_scale) (state-dependent part: −B diag(δs) K e)
};

class Linearization {
 public:
  Linearization(const ClosedLoop& cl, const TubeInputBounds& bounds)
      : cl_(cl), model_(cl.model()), bounds_(bounds), p_(cl.model().parameters()) {
    // The nominal run's commanded input u_ff − K(x_nom − x_ref), which an
    // input-scale error multiplies (cmd.<input> outputs, the last m columns).
    const int m = model_.input_count();
    Eigen::MatrixXd out(static_cast<Eigen::Index>(cl.report_times().size()), cl.output_count());
    cl.run(cl.nominal(), out, -1);
    nominal_command_ = out.rightCols(m);
  }

  LoopAt at(double t) const {
    const int n = model_.state_count(), m = model_.input_count(), np = model_.parameter_count();
    LoopAt l;
    linearize_plan(model_, cl_.plan(), p_, t, l.A, l.B);
    l.K = cl_.controller().gain(t);
    l.Acl = l.A - l.B * l.K;
    const Eigen::VectorXd x = cl_.plan().reference_state(t), u = cl_.plan().feedforward(t);
    std::vector<Eigen::VectorXd> columns;
    for (int i = 0; i < n; ++i)
      if (bounds_.disturbance[i] > 0.0) columns.push_back(Eigen::VectorXd::Unit(n, i) * bounds_.disturbance[i]);
    for (int j = 0; j < m; ++j) {
      if (bounds_.input_bias[j] > 0.0) columns.push_back(l.B.col(j) * bounds_.input_bias[j]);
      if (bounds_.input_scale[j] > 0.0) {
        const GridSegment g = grid_segment(cl_.report_times(), t);
        const double command = (1.0 - g.w) * nominal_command_(g.k, j) + g.w * nominal_command_(g.k1, j);
        columns.push_back(l.B.col(j) * (command * bounds_.input_scale[j]));
      }
    }
    Eigen::VectorXd f_plus(n), f_minus(n);
    for (int j = 0; j < np; ++j) {
      if (!(bounds_.parameters[j] > 0.0)) continue;
      // Central difference of f in p_j (step as Model::jacobians).
      const double h = std::cbrt(std::numeric_limits<double>::epsilon()) * std::max(1.0, std::abs(p_[j]));
      Eigen::VectorXd pp = p_, pm = p_;
      pp[j] += h, pm[j] -= h;
      model_.rhs(t, x.data(), u.data(), pp.data(), f_plus.data());
      model_.rhs(t, x.data(), u.data(), pm.data(), f_minus.data());
      columns.push_back((f_plus - f_minus) / (2.0 * h) * bounds_.parameters[j]);
    }
    l.sources.resize(n, static_cast<Eigen::Index>(columns.size()));
    for (std::size_t k = 0; k < columns.size(); ++k) l.sources.col(static_cast<Eigen::Index>(k)) = columns[k];
    l.scale_B = l.B * bounds_.input_scale.asDiagonal();
    return l;
  }

 private:
  const ClosedLoop& cl_;
  const Model& model_;
  const TubeInputBounds& bounds_;
  Eigen::VectorXd p_;
  Eigen::MatrixXd nominal_command_;  // [T, m]
};

// The metric at t: P and, when it varies, Ṗ.
using MetricAt = std::function<void(double t, const LoopAt& l, Eigen::MatrixXd& P, Eigen::MatrixXd& Pdot)>;

struct Evaluation {
  Eigen::VectorXd radius, rate;
  double score = std::numeric_limits<double>::infinity();  // mean radius; inf when some radius is NaN
  double first_unbounded = kNaN;
};

Evaluation evaluate(const std::vector<double>& times, const std::vector<int>& position, const Linearization& lin,
                    const MetricAt& metric, const Eigen::VectorXd& initial) {
  const Eigen::Index T = static_cast<Eigen::Index>(times.size());
  const int n = static_cast<int>(initial.size());
  Evaluation ev;
  ev.radius = Eigen::VectorXd::Constant(T, kNaN);
  ev.rate = Eigen::VectorXd::Constant(T, kNaN);
  Eigen::MatrixXd C = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(position.size()), n);
  for (std::size_t k = 0; k < position.size(); ++k) C(static_cast<Eigen::Index>(k), position[k]) = 1.0;
  // Rate λ(t) and P-norm of the disturbance box w̄_P(t) at one time.
  const auto sample = [&](double t, double& rate, double& wbar, Eigen::MatrixXd* P_out) {
    const LoopAt l = lin.at(t);
    Eigen::MatrixXd P, Pdot;
    metric(t, l, P, Pdot);
    const Eigen::LLT<Eigen::MatrixXd> llt(P);
    if (llt.info() != Eigen::Success) {
      rate = -1.0, wbar = kNaN;
      return;
    }
    const Eigen::MatrixXd U = llt.matrixU();  // P = UᵀU, ‖e‖_P = ‖U e‖
    const Eigen::MatrixXd Uinv = U.triangularView<Eigen::Upper>().solve(Eigen::MatrixXd::Identity(n, n));
    const Eigen::MatrixXd M = -(Pdot + l.Acl.transpose() * P + P * l.Acl);
    const Eigen::MatrixXd S = Uinv.transpose() * M * Uinv;
    double gamma = 0.0;  // ‖U B diag(δs) K U⁻¹‖ ≤ Σ_j b_j ‖U B_j‖ ‖K_j U⁻¹‖
    for (Eigen::Index j = 0; j < l.scale_B.cols(); ++j)
      if (l.scale_B.col(j).squaredNorm() > 0.0)
        gamma += (U * l.scale_B.col(j)).norm() * (l.K.row(j) * Uinv).norm();
    rate = 0.5 * min_eigenvalue(0.5 * (S + S.transpose())) - gamma;
    wbar = box_sup_norm(U * l.sources);
    if (P_out) *P_out = P;
  };
  double rho = 0.0;
  bool unbounded = false;  // once the loop stops contracting, no radius from there on (the rate is still reported)
  for (Eigen::Index k = 0; k < T; ++k) {
    const double t = times[static_cast<std::size_t>(k)];
    double rate_k = 0.0, wbar_k = 0.0;
    Eigen::MatrixXd P;
    sample(t, rate_k, wbar_k, &P);
    ev.rate[k] = rate_k;
    if (unbounded) continue;
    if (P.size() == 0) {
      unbounded = true;
      ev.first_unbounded = t;
      continue;
    }
    if (k == 0) {
      const Eigen::MatrixXd U = Eigen::LLT<Eigen::MatrixXd>(P).matrixU();
      rho = box_sup_norm(U * initial.asDiagonal());
    } else {
      const double t0 = times[static_cast<std::size_t>(k - 1)], h = t - t0;
      double lam = rate_k, w = wbar_k;
      for (int s = 0; s < kSamplesPerInterval - 1; ++s) {
        double r_s = 0.0, w_s = 0.0;
        sample(t0 + h * s / (kSamplesPerInterval - 1), r_s, w_s, nullptr);
        lam = std::min(lam, r_s), w = std::max(w, w_s);
      }
      if (!(lam > 0.0) || !std::isfinite(w)) {
        unbounded = true;
        ev.first_unbounded = t0;
        continue;
      }
      const double decay = std::exp(-lam * h);
      rho = decay * rho + w * (1.0 - decay) / lam;
    }
    ev.radius[k] = rho * std::sqrt(std::max(0.0, max_eigenvalue(C * P.inverse() * C.transpose())));
  }
  if (ev.radius.allFinite()) ev.score = ev.radius.mean();
  return ev;
}

}  // namespace

Eigen::MatrixXd lyapunov_solution(const Eigen::MatrixXd& A, const Eigen::MatrixXd& Q) {
  const Eigen::Index n = A.rows();
  const Eigen::MatrixXd I = Eigen::MatrixXd::Identity(n, n);
  Eigen::MatrixXd L = Eigen::MatrixXd::Zero(n * n, n * n);
  // vec(AᵀP) = (I ⊗ Aᵀ) vec P, vec(PA) = (Aᵀ ⊗ I) vec P (column-major vec).
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index j = 0; j < n; ++j) {
      L.block(i * n, i * n, n, n) += (i == j ? 1.0 : 0.0) * A.transpose();
      L.block(i * n, j * n, n, n) += A(j, i) * I;
    }
  const Eigen::FullPivLU<Eigen::MatrixXd> lu(L);
  if (!lu.isInvertible()) throw NumericalError("Lyapunov equation is singular (A and −A share an eigenvalue)");
  const Eigen::VectorXd q = -Eigen::Map<const Eigen::VectorXd>(Q.data(), n * n);
  const Eigen::VectorXd p = lu.solve(q);
  const Eigen::MatrixXd P = Eigen::Map<const Eigen::MatrixXd>(p.data(), n, n);
  return 0.5 * (P + P.transpose());
}

TubeInputBounds tube_input_bounds(const std::vector<casefile::UncertainOptions>& inputs, const Model& model,
                                  double sigma) {
  TubeInputBounds b;
  b.initial = b.disturbance = Eigen::VectorXd::Zero(model.state_count());
  b.input_bias = b.input_scale = Eigen::VectorXd::Zero(model.input_count());
  b.parameters = Eigen::VectorXd::Zero(model.parameter_count());
  const Eigen::VectorXd p0 = model.parameters();
  for (const auto& u : inputs) {
    std::ostringstream line;
    line << u.name << ": ";
    bool any_sigma = false;
    for (std::size_t c = 0; c < u.applies_to.size(); ++c) {
      const std::string& target = u.applies_to[c];
      const auto dot = target.find('.');
      const std::string kind = target.substr(0, dot), name = dot == std::string::npos ? "" : target.substr(dot + 1);
      const Bound r = scalar_bound(u, sigma, c);
      any_sigma = any_sigma || r.from_sigma;
      const auto fail = [&]() {
        throw InputError(u.key_where.of("applies_to", u.where), "'" + target + "' names no state, input or parameter");
      };
      const auto put = [&](Eigen::VectorXd& into, int index, double nominal) {
        if (index < 0) fail();
        into[index] = std::max(into[index], std::max(std::abs(r.low - nominal), std::abs(r.high - nominal)));
      };
      if (kind == "initial") put(b.initial, index_of(model.state_names(), name), 0.0);
      else if (kind == "disturbance") put(b.disturbance, index_of(model.state_names(), name), 0.0);
      else if (kind == "input_bias") put(b.input_bias, index_of(model.input_names(), name), 0.0);
      else if (kind == "input_scale") put(b.input_scale, index_of(model.input_names(), name), 1.0);
      else if (kind == "parameter") {
        const int j = index_of(model.parameter_names(), name);
        put(b.parameters, j, j >= 0 ? p0[j] : 0.0);
      } else fail();
      line << (c ? ", " : "") << target << " in [" << fmt(r.low) << ", " << fmt(r.high) << "]";
    }
    line << (any_sigma ? " — unbounded distribution cut at mean ± " + fmt(sigma) + " std (assumption, [tube] sigma)"
                       : " — the distribution's support");
    b.assumptions.push_back(line.str());
  }
  return b;
}

DeterministicTube deterministic_tube(const ClosedLoop& cl, const casefile::CaseOptions& options,
                                     const std::vector<std::string>& position, double sigma,
                                     const SourceLocation& where) {
  const Model& model = cl.model();
  const int n = model.state_count();
  std::vector<int> pos;
  for (const auto& name : position) {
    const int i = index_of(model.state_names(), name);
    if (i < 0) throw InputError(where, "'" + name + "' is not a state of model '" + model.name() + "'");
    pos.push_back(i);
  }
  const TubeInputBounds bounds = tube_input_bounds(options.uncertain, model, sigma);
  const Linearization lin(cl, bounds);
  DeterministicTube tube;
  tube.time = cl.report_times();
  tube.assumptions.push_back("the closed loop linearized along the plan (first-order model of the deviation)");
  if (!options.control.limits.empty()) tube.assumptions.push_back("input saturation ignored (no limit reached)");
  for (const auto& a : bounds.assumptions) tube.assumptions.push_back(a);

  // Does A_cl move along the plan?
  const double t_start = tube.time.front(), t_end = tube.time.back();
  const Eigen::MatrixXd A0 = lin.at(t_start).Acl;
  double moved = 0.0;
  for (int k = 1; k <= 20; ++k) moved = std::max(moved, (lin.at(t_start + (t_end - t_start) * k / 20.0).Acl - A0).norm());
  tube.time_invariant = moved <= kTimeInvariantTolerance * (1.0 + A0.norm());

  Evaluation best;
  const bool riccati = options.control.law == casefile::ControlLaw::lqr && options.control.time_varying;
  if (riccati) {
    const Eigen::MatrixXd Q = Eigen::Map<const Eigen::VectorXd>(options.control.q.data(), n).asDiagonal();
    const Eigen::MatrixXd R =
        Eigen::Map<const Eigen::VectorXd>(options.control.r.data(), model.input_count()).asDiagonal();
    const Eigen::MatrixXd Rinv = R.inverse();
    const RiccatiSchedule schedule = solve_riccati_differential_equation(
        model, cl.plan(), model.parameters(), Q, R, options.simulation.step_in_seconds);
    const MetricAt metric = [&](double t, const LoopAt& l, Eigen::MatrixXd& P, Eigen::MatrixXd& Pdot) {
      const GridSegment g = grid_segment(schedule.times, t);
      P = (1.0 - g.w) * schedule.cost[static_cast<std::size_t>(g.k)] + g.w * schedule.cost[static_cast<std::size_t>(g.k1)];
      P = 0.5 * (P + P.transpose());
      // Riccati differential equation: −Ṗ = AᵀP + PA − PBR⁻¹BᵀP + Q.
      Pdot = -(l.A.transpose() * P + P * l.A - P * l.B * Rinv * l.B.transpose() * P + Q);
    };
    best = evaluate(tube.time, pos, lin, metric, bounds.initial);
    tube.metric_kind = "Riccati cost-to-go P(t) of the time-varying LQR loop";
    Eigen::MatrixXd P, Pdot;
    metric(t_start, lin.at(t_start), P, Pdot);
    tube.metric = P;
  } else {
    std::vector<Eigen::MatrixXd> candidates{Eigen::MatrixXd::Identity(n, n)};
    std::vector<std::string> names{"P = I"};
    const Eigen::VectorXcd eig = Eigen::EigenSolver<Eigen::MatrixXd>(A0, false).eigenvalues();
    const double abscissa = eig.real().maxCoeff();
    if (abscissa < 0.0) {
      for (double f : kShiftFractions) {
        const double mu = -f * abscissa;
        try {
          candidates.push_back(lyapunov_solution(A0 + mu * Eigen::MatrixXd::Identity(n, n), Eigen::MatrixXd::Identity(n, n)));
          names.push_back("Lyapunov matrix of A_cl(t0) shifted by mu = " + fmt(mu) + " 1/s");
        } catch (const NumericalError&) {
        }
      }
    }
    std::size_t chosen = 0;
    for (std::size_t c = 0; c < candidates.size(); ++c) {
      const Eigen::MatrixXd& Pc = candidates[c];
      const MetricAt metric = [&](double, const LoopAt&, Eigen::MatrixXd& P, Eigen::MatrixXd& Pdot) {
        P = Pc;
        Pdot = Eigen::MatrixXd::Zero(n, n);
      };
      Evaluation ev = evaluate(tube.time, pos, lin, metric, bounds.initial);
      const bool better = c == 0 || ev.score < best.score ||
                          (!std::isfinite(best.score) && !std::isfinite(ev.score) &&
                           std::isnan(best.first_unbounded) == false &&
                           (std::isnan(ev.first_unbounded) || ev.first_unbounded > best.first_unbounded));
      if (better) best = std::move(ev), chosen = c;
    }
    tube.metric = candidates[chosen];
    tube.metric_kind = std::string(tube.time_invariant ? "constant loop" : "time-varying loop") +
                       ", constant metric: " + names[chosen] + " (best of " + std::to_string(candidates.size()) +
                       " candidates by mean radius)";
  }
  tube.radius = best.radius;
  tube.rate = best.rate;
  tube.bounded = tube.radius.allFinite();
  if (!tube.bounded) {
    std::ostringstream why;
    why << "no bound: the linearized loop does not contract in this metric";
    if (!std::isnan(best.first_unbounded)) why << " from t = " << best.first_unbounded << " s";
    tube.no_bound_reason = why.str();
  }
  return tube;
}

}  // namespace sigmatube::model
