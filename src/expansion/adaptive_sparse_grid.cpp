// SPDX-License-Identifier: MIT
// Dimension-adaptive Smolyak pseudo-spectral projection.
//
// Index sets: Gerstner & Griebel, "Dimension-adaptive tensor-product
// quadrature", Computing 71 (2003): an "old" downward-closed set O and an
// "active" margin A of admissible indices (every backward neighbour in O); the
// active index with the largest error indicator per cost moves to O and its
// admissible forward neighbours become active.
// Projection: Conrad & Marzouk, "Adaptive Smolyak pseudospectral
// approximations", SIAM J. Sci. Comput. 35 (2013): each tensor rule i projects
// only onto the rectangle K_i = {α : α_k ≤ ⌊m(i_k)/2⌋} it integrates exactly,
//   P_i f = Σ_{α∈K_i} [Σ_j w_j ψ_α(x_j) f(x_j)] ψ_α,
// and the surrogate on I = O ∪ A is the sum of the differences
//   Δ_i = Σ_{z∈{0,1}^d, i−z ≥ 1} (−1)^{|z|} P_{i−z},   f ≈ Σ_{i∈I} Δ_i f,
// which equals the Smolyak combination on I and reproduces every polynomial in
// span{ψ_α : α ∈ ∪ K_i} exactly.
// Rules: nested weighted Leja sequences (design/leja.h), so a refinement reuses
// every run of the levels below.
// Indicator of index i (a weighted norm over every output and report time):
//   η_i = max_o √( Σ_t ‖Δ_i[:, c]‖² / Σ_t s_c² ),  c = t·n_outputs + o,
// the relative size of the index's contribution to the worst output's whole time
// history (s_c² the current variance of column c), divided by the index's new
// model runs.
// Stopping: the hold-out estimate (build_parts.h) of every output ≤ tolerance,
// or no admissible index fits in max_model_runs.
#include <algorithm>
#include <memory>
#include <numeric>

#include "build_parts.h"
#include "sigmatube/design/leja.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"

namespace sigmatube::expansion::detail {
namespace {

// Highest Leja level per dimension (2·30 + 1 = 61 points, degree 30): beyond it
// the interpolatory weights of unbounded families lose accuracy.
constexpr int kMaxLejaLevel = 30;
// Floor of the indicator denominators, as in pooled_relative_rmse.
constexpr double kScaleFloorRelative = 1e-12;

using Level = std::vector<int>;

struct Node {
  Level level;
  std::vector<int> bound;    // ⌊m/2⌋ per dimension
  std::vector<int> stride;   // mixed radix of the rectangle, dimension 0 fastest
  MultiIndexSet rect;        // K_i, [R, d]
  Eigen::MatrixXd P;         // P_i f on K_i, [R, C]
  Eigen::VectorXd delta_sq;  // ‖Δ_i[:, c]‖² per column
  int cost = 1;              // model runs the index added
  bool old = false;
};

class Builder {
 public:
  Builder(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
          const casefile::SurrogateOptions& options, RunCache& cache)
      : families_(families), d_(static_cast<int>(families.size())), n_times_(n_times), n_outputs_(n_outputs),
        columns_(n_times * n_outputs), options_(options), cache_(cache) {
    for (int k = 0; k < d_; ++k) {
      int same = -1;
      for (int j = 0; j < k && same < 0; ++j)
        if (families[j] == families[k]) same = rule_of_[j];
      if (same >= 0) {
        rule_of_.push_back(same);
      } else {
        rule_of_.push_back(static_cast<int>(rules_.size()));
        rules_.push_back(std::make_unique<design::LejaRules>(families[k]));
      }
    }
  }

  AdaptiveOutcome run() {
    AdaptiveOutcome out;
    const int first = adaptive_sparse_grid_first_runs(families_);
    const int n_hold = hold_out_size(options_.max_model_runs - first);
    if (n_hold == 0) throw std::logic_error("adaptive_sparse_grid: the first design does not fit (checked earlier)");
    hold_points_ = hold_out_points(families_, n_hold);

    // First step: the index (1, …, 1), its forward neighbours and the hold-out
    // points in one evaluator call.
    const Level one(static_cast<std::size_t>(d_), 1);
    std::vector<Level> batch{one};
    for (int k = 0; k < d_; ++k) {
      Level l = one;
      l[static_cast<std::size_t>(k)] = 2;
      batch.push_back(l);
    }
    add_nodes(batch, &hold_points_);
    nodes_[0].old = true;
    out.runs_per_refinement.push_back(cache_.size());

    int refinements = 0;
    while (true) {
      const Eigen::VectorXd estimate = current_estimate();
      const double worst = estimate.maxCoeff();
      out.history.emplace_back(cache_.size(), worst);
      if ((estimate.array() <= options_.tolerance).all()) {
        out.tolerance_met = true;
        std::ostringstream m;
        m << "tolerance " << options_.tolerance << " met after " << refinements << " refinements";
        out.stop_reason = m.str();
        break;
      }
      // The active index with the largest indicator per cost.
      const Eigen::VectorXd denominators = output_denominators();
      int best = -1;
      double best_priority = -1.0;
      for (std::size_t i = 0; i < nodes_.size(); ++i) {
        if (nodes_[i].old) continue;
        const double priority = indicator(nodes_[i], denominators) / nodes_[i].cost;
        if (priority > best_priority) best_priority = priority, best = static_cast<int>(i);
      }
      if (best < 0) {
        out.stop_reason = "every admissible index was refined or would exceed max_model_runs = " +
                          std::to_string(options_.max_model_runs) + " before meeting tolerance";
        break;
      }
      nodes_[static_cast<std::size_t>(best)].old = true;
      const Level chosen = nodes_[static_cast<std::size_t>(best)].level;
      std::vector<Level> candidates;
      for (int k = 0; k < d_; ++k) {
        Level l = chosen;
        if (++l[static_cast<std::size_t>(k)] > kMaxLejaLevel) continue;
        if (admissible(l)) candidates.push_back(l);
      }
      // Add the neighbours that fit in the budget (all of them in one call when they do).
      std::vector<Level> fitting;
      Eigen::MatrixXd pending(0, d_);
      for (const Level& l : candidates) {
        const Eigen::MatrixXd pts = tensor_points(l, nullptr);
        Eigen::MatrixXd trial(pending.rows() + pts.rows(), d_);
        trial << pending, pts;
        if (cache_.size() + cache_.count_new(trial) <= options_.max_model_runs) {
          fitting.push_back(l);
          pending = std::move(trial);
        }
      }
      if (!fitting.empty()) {
        add_nodes(fitting, nullptr);
        ++refinements;
        out.runs_per_refinement.push_back(cache_.size());
      }
      if (fitting.size() < candidates.size() && cache_.size() >= options_.max_model_runs) {
        out.stop_reason = "run budget max_model_runs = " + std::to_string(options_.max_model_runs) +
                          " spent before meeting tolerance " + format(options_.tolerance);
        out.history.emplace_back(cache_.size(), current_estimate().maxCoeff());
        break;
      }
    }
    finish(out, refinements);
    return out;
  }

 private:
  static std::string format(double v) {
    std::ostringstream m;
    m << v;
    return m.str();
  }

  bool admissible(const Level& l) const {
    if (node_of_.count(l)) return false;
    for (int k = 0; k < d_; ++k) {
      if (l[static_cast<std::size_t>(k)] == 1) continue;
      Level back = l;
      --back[static_cast<std::size_t>(k)];
      const auto it = node_of_.find(back);
      if (it == node_of_.end() || !nodes_[static_cast<std::size_t>(it->second)].old) return false;
    }
    return true;
  }

  // Points (and product weights) of the tensor rule of level l, dimension 0 fastest.
  Eigen::MatrixXd tensor_points(const Level& l, Eigen::VectorXd* weights) {
    std::vector<const design::QuadratureRule*> rule(static_cast<std::size_t>(d_));
    Eigen::Index count = 1;
    for (int k = 0; k < d_; ++k) {
      rule[static_cast<std::size_t>(k)] = &rules_[static_cast<std::size_t>(rule_of_[static_cast<std::size_t>(k)])]->rule(
          l[static_cast<std::size_t>(k)]);
      count *= rule[static_cast<std::size_t>(k)]->size();
    }
    Eigen::MatrixXd points(count, d_);
    if (weights) weights->resize(count);
    std::vector<int> j(static_cast<std::size_t>(d_), 0);
    for (Eigen::Index row = 0; row < count; ++row) {
      double w = 1.0;
      for (int k = 0; k < d_; ++k) {
        const auto& r = *rule[static_cast<std::size_t>(k)];
        points(row, k) = r.nodes[j[static_cast<std::size_t>(k)]];
        w *= r.weights[j[static_cast<std::size_t>(k)]];
      }
      if (weights) (*weights)[row] = w;
      for (int k = 0; k < d_; ++k) {
        if (++j[static_cast<std::size_t>(k)] < rule[static_cast<std::size_t>(k)]->size()) break;
        j[static_cast<std::size_t>(k)] = 0;
      }
    }
    return points;
  }

  void add_nodes(const std::vector<Level>& levels, const Eigen::MatrixXd* extra) {
    // One evaluator call for every new point of the batch.
    std::vector<Eigen::MatrixXd> pts;
    std::vector<Eigen::VectorXd> wts(levels.size());
    Eigen::Index rows = extra ? extra->rows() : 0;
    for (std::size_t i = 0; i < levels.size(); ++i) {
      pts.push_back(tensor_points(levels[i], &wts[i]));
      rows += pts.back().rows();
    }
    Eigen::MatrixXd all(rows, d_);
    rows = 0;
    std::vector<int> cost(levels.size());
    for (std::size_t i = 0; i < levels.size(); ++i) {
      // Runs this index adds (before the batch runs; shared points count once, to the first).
      Eigen::MatrixXd so_far = all.topRows(rows);
      Eigen::MatrixXd with(rows + pts[i].rows(), d_);
      with << so_far, pts[i];
      cost[i] = std::max(1, cache_.count_new(with) - cache_.count_new(so_far));
      all.middleRows(rows, pts[i].rows()) = pts[i];
      rows += pts[i].rows();
    }
    if (extra) all.bottomRows(extra->rows()) = *extra;
    const Eigen::MatrixXd all_values = cache_.values(all);
    if (extra) hold_values_ = all_values.bottomRows(extra->rows());
    rows = 0;
    for (std::size_t i = 0; i < levels.size(); ++i) {
      add_node(levels[i], pts[i], wts[i], all_values.middleRows(rows, pts[i].rows()), cost[i]);
      rows += pts[i].rows();
    }
  }

  void add_node(const Level& level, const Eigen::MatrixXd& points, const Eigen::VectorXd& weights,
                const Eigen::MatrixXd& values, int cost) {
    Node node;
    node.level = level;
    node.cost = cost;
    node.bound.resize(static_cast<std::size_t>(d_));
    node.stride.resize(static_cast<std::size_t>(d_));
    Eigen::Index size = 1;
    for (int k = 0; k < d_; ++k) {
      node.bound[static_cast<std::size_t>(k)] = design::leja_level_degree(level[static_cast<std::size_t>(k)]);
      node.stride[static_cast<std::size_t>(k)] = static_cast<int>(size);
      size *= node.bound[static_cast<std::size_t>(k)] + 1;
    }
    node.rect.resize(size, d_);
    for (Eigen::Index r = 0; r < size; ++r)
      for (int k = 0; k < d_; ++k)
        node.rect(r, k) = static_cast<int>((r / node.stride[static_cast<std::size_t>(k)]) %
                                           (node.bound[static_cast<std::size_t>(k)] + 1));
    const Eigen::MatrixXd psi = basis_matrix(families_, node.rect, points);
    node.P.noalias() = psi.transpose() * (weights.asDiagonal() * values);

    // Δ_i on K_i from the projections of the indices below.
    Eigen::MatrixXd delta = node.P;
    std::vector<int> active;
    for (int k = 0; k < d_; ++k)
      if (level[static_cast<std::size_t>(k)] > 1) active.push_back(k);
    for (unsigned mask = 1; mask < (1u << active.size()); ++mask) {
      Level below = level;
      int bits = 0;
      for (std::size_t a = 0; a < active.size(); ++a)
        if (mask & (1u << a)) --below[static_cast<std::size_t>(active[a])], ++bits;
      const Node& lower = nodes_.at(static_cast<std::size_t>(node_of_.at(below)));
      const double sign = (bits % 2) ? -1.0 : 1.0;
      for (Eigen::Index r = 0; r < lower.rect.rows(); ++r) {
        Eigen::Index pos = 0;
        for (int k = 0; k < d_; ++k) pos += static_cast<Eigen::Index>(lower.rect(r, k)) * node.stride[static_cast<std::size_t>(k)];
        delta.row(pos) += sign * lower.P.row(r);
      }
    }
    node.delta_sq = delta.colwise().squaredNorm().transpose();
    add_to_total(node.rect, delta);
    node_of_[level] = static_cast<int>(nodes_.size());
    nodes_.push_back(std::move(node));
  }

  void add_to_total(const MultiIndexSet& rect, const Eigen::MatrixXd& delta) {
    std::vector<Eigen::Index> rows(static_cast<std::size_t>(rect.rows()));
    for (Eigen::Index r = 0; r < rect.rows(); ++r) {
      std::vector<int> alpha(rect.row(r).data(), rect.row(r).data() + d_);
      auto it = row_of_.find(alpha);
      if (it == row_of_.end()) {
        if (used_ == total_.rows()) total_.conservativeResize(std::max<Eigen::Index>(16, 2 * total_.rows()), columns_);
        total_.row(used_).setZero();
        it = row_of_.emplace(alpha, used_).first;
        alphas_.push_back(std::move(alpha));
        ++used_;
      }
      rows[static_cast<std::size_t>(r)] = it->second;
      total_.row(it->second) += delta.row(r);
    }
    // Surrogate at the hold-out points, updated by this difference.
    if (hold_points_.rows() > 0) {
      if (hold_fit_.size() == 0) hold_fit_ = Eigen::MatrixXd::Zero(hold_points_.rows(), columns_);
      hold_fit_.noalias() += basis_matrix(families_, rect, hold_points_) * delta;
    }
  }

  // Σ_t s_c² per output (floored), the denominators of indicators and estimates.
  Eigen::VectorXd output_denominators() const {
    Eigen::VectorXd result(n_outputs_);
    for (int o = 0; o < n_outputs_; ++o) {
      double variance = 0.0, mean_square = 0.0;
      for (int t = 0; t < n_times_; ++t) {
        const Eigen::Index c = static_cast<Eigen::Index>(t) * n_outputs_ + o;
        for (Eigen::Index r = 0; r < used_; ++r) {
          const double v = total_(r, c);
          if (r == 0) mean_square += v * v;  // row 0 is the zero index (first added)
          else variance += v * v;
        }
      }
      const double floor = kScaleFloorRelative * std::max(1.0, std::sqrt(mean_square / n_times_));
      result[o] = std::max(variance, floor * floor * n_times_);
    }
    return result;
  }

  double indicator(const Node& node, const Eigen::VectorXd& denominators) const {
    double worst = 0.0;
    for (int o = 0; o < n_outputs_; ++o) {
      double sum = 0.0;
      for (int t = 0; t < n_times_; ++t) sum += node.delta_sq[static_cast<Eigen::Index>(t) * n_outputs_ + o];
      worst = std::max(worst, std::sqrt(sum / denominators[o]));
    }
    return worst;
  }

  Eigen::VectorXd current_estimate() const {
    const Eigen::VectorXd mse =
        (hold_fit_ - hold_values_).colwise().squaredNorm().transpose() / static_cast<double>(hold_points_.rows());
    const Eigen::VectorXd denominators = output_denominators();
    Eigen::VectorXd result(n_outputs_);
    for (int o = 0; o < n_outputs_; ++o) {
      double sum = 0.0;
      for (int t = 0; t < n_times_; ++t) sum += mse[static_cast<Eigen::Index>(t) * n_outputs_ + o];
      result[o] = std::sqrt(sum / denominators[o]);
    }
    return result;
  }

  void finish(AdaptiveOutcome& out, int refinements) {
    out.indices = graded(alphas_, d_);
    out.coefficients.resize(out.indices.rows(), columns_);
    for (Eigen::Index r = 0; r < out.indices.rows(); ++r) {
      const std::vector<int> alpha(out.indices.row(r).data(), out.indices.row(r).data() + d_);
      out.coefficients.row(r) = total_.row(row_of_.at(alpha));
    }
    out.error_estimate = current_estimate();
    int old = 0;
    int highest = 1;
    for (const Node& n : nodes_) {
      old += n.old ? 1 : 0;
      highest = std::max(highest, *std::max_element(n.level.begin(), n.level.end()));
    }
    std::ostringstream m;
    m << "adaptive-sparse-grid: " << refinements << " refinements, " << nodes_.size() << " tensor rules (" << old
      << " refined, " << nodes_.size() - old << " active), highest Leja level " << highest << ", " << cache_.size()
      << " model runs of which " << hold_points_.rows() << " hold-out";
    out.notes.push_back(m.str());
  }

  const std::vector<germ::FamilySpec>& families_;
  int d_, n_times_, n_outputs_, columns_;
  const casefile::SurrogateOptions& options_;
  RunCache& cache_;
  std::vector<std::unique_ptr<design::LejaRules>> rules_;
  std::vector<int> rule_of_;
  std::vector<Node> nodes_;
  std::map<Level, int> node_of_;
  Eigen::MatrixXd total_;
  Eigen::Index used_ = 0;
  std::map<std::vector<int>, Eigen::Index> row_of_;
  std::vector<std::vector<int>> alphas_;
  Eigen::MatrixXd hold_points_, hold_values_, hold_fit_;
};

}  // namespace

int adaptive_sparse_grid_first_runs(const std::vector<germ::FamilySpec>& families) {
  // (1, …, 1) and each e_k at level 2: 1 + d·(n(2) − 1) distinct points (Leja
  // sequences start at the mean, shared by every level), plus the least hold-out.
  const int d = static_cast<int>(families.size());
  return 1 + d * (design::leja_level_points(2) - 1);
}

AdaptiveOutcome adaptive_sparse_grid(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
                                     const casefile::SurrogateOptions& options, RunCache& cache) {
  Builder builder(families, n_times, n_outputs, options, cache);
  return builder.run();
}

}  // namespace sigmatube::expansion::detail
