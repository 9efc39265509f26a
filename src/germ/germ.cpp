// SPDX-License-Identifier: MIT
#include "sigmatube/germ/germ.h"

#include <algorithm>
#include <charconv>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/triangular.hpp>
#include <cmath>
#include <limits>
#include <set>
#include <sstream>
#include <stdexcept>

#include "sigmatube/casefile/nearest_name.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/germ/karhunen_loeve.h"

namespace sigmatube::germ {
namespace {
using casefile::DistributionKind;
using casefile::UncertainOptions;

const boost::math::normal_distribution<double> kStandardNormal(0.0, 1.0);

double lower_tail(double z) { return boost::math::cdf(kStandardNormal, z); }
double upper_tail(double z) { return boost::math::cdf(boost::math::complement(kStandardNormal, z)); }
// Φ⁻¹(p) and Φ⁻¹(1 − q); the end points give ±∞ (which the callers clamp to
// the support) where Boost would raise an overflow error.
double lower_quantile(double p) {
  if (p <= 0.0) return -std::numeric_limits<double>::infinity();
  if (p >= 1.0) return std::numeric_limits<double>::infinity();
  return boost::math::quantile(kStandardNormal, p);
}
double upper_quantile(double q) {
  if (q <= 0.0) return std::numeric_limits<double>::infinity();
  if (q >= 1.0) return -std::numeric_limits<double>::infinity();
  return boost::math::quantile(boost::math::complement(kStandardNormal, q));
}

// Relative asymmetry a covariance may have and still count as symmetric: a
// matrix typed as decimals in a case file is symmetric to the last digit, so
// anything above round-off is a typing mistake (common practice).
constexpr double kSymmetryTolerance = 1e-12;

std::string suggestion(const std::string& word, const std::vector<std::string>& candidates) {
  return casefile::suggestion_or_list(word, candidates);
}

SourceLocation at_key(const UncertainOptions& entry, const std::string& key) {
  SourceLocation where = entry.where;
  where.key = where.key.empty() ? key : where.key + "." + key;
  return where;
}

[[noreturn]] void fail(const UncertainOptions& entry, const std::string& key, const std::string& message) {
  throw InputError(at_key(entry, key), "uncertain input '" + entry.name + "': " + message);
}

void require(bool condition, const UncertainOptions& entry, const std::string& key, const std::string& message) {
  if (!condition) fail(entry, key, message);
}

// Shortest digits that read back to the same double: 0.1, not 0.10000000000000001.
std::string number(double value) {
  char buffer[64];
  const auto end = std::to_chars(buffer, buffer + sizeof buffer, value).ptr;
  return std::string(buffer, end);
}

const char* distribution_name(DistributionKind kind) {
  switch (kind) {
    case DistributionKind::normal: return "normal";
    case DistributionKind::uniform: return "uniform";
    case DistributionKind::beta: return "beta";
    case DistributionKind::gamma: return "gamma";
    case DistributionKind::lognormal: return "lognormal";
    case DistributionKind::truncated_normal: return "truncated-normal";
    case DistributionKind::triangular: return "triangular";
    case DistributionKind::gaussian_process: return "gaussian-process";
  }
  return "?";
}
}  // namespace

double Germ::ScalarMap::value(double xi) const {
  switch (kind) {
    case MapKind::affine: return offset + slope * xi;
    case MapKind::lognormal: return std::exp(mu + sigma * xi);
    case MapKind::truncated_normal: {
      // x = m + s·Φ⁻¹(Φ(α) + Φ(ξ)(Φ(β) − Φ(α))), α, β the standardized bounds.
      // Written as a convex combination of tail probabilities, in the tail where
      // they are small, so bounds far out in either tail keep their digits.
      const double alpha = (low - offset) / slope;
      const double beta = (high - offset) / slope;
      // p = the germ's CDF at ξ, q = 1 − p.
      const double p = uniform_germ ? 0.5 * (1.0 + xi) : lower_tail(xi);
      const double q = uniform_germ ? 0.5 * (1.0 - xi) : upper_tail(xi);
      double standardized;
      if (alpha >= 0.0) {
        standardized = upper_quantile(q * upper_tail(alpha) + p * upper_tail(beta));
      } else if (beta <= 0.0) {
        standardized = lower_quantile(q * lower_tail(alpha) + p * lower_tail(beta));
      } else {
        const double below = q * lower_tail(alpha) + p * lower_tail(beta);
        standardized = below <= 0.5 ? lower_quantile(below) : upper_quantile(q * upper_tail(alpha) + p * upper_tail(beta));
      }
      // Round-off can step a hair outside the window; the support is closed.
      return std::clamp(offset + slope * standardized, low, high);
    }
    case MapKind::triangular: {
      const boost::math::triangular_distribution<double> triangle(low, mode, high);
      return xi <= 0.0 ? boost::math::quantile(triangle, lower_tail(xi))
                       : boost::math::quantile(boost::math::complement(triangle, upper_tail(xi)));
    }
  }
  throw std::logic_error("Germ: unknown scalar map");
}

Germ Germ::build(const std::vector<casefile::UncertainOptions>& inputs, const TargetSpace& targets) {
  Germ germ;
  germ.n_states_ = static_cast<int>(targets.states.size());
  germ.n_inputs_ = static_cast<int>(targets.inputs.size());
  germ.n_parameters_ = static_cast<int>(targets.parameters.size());
  germ.n_times_ = static_cast<int>(targets.disturbance_times.size());

  std::set<std::string> input_names;
  std::set<std::string> replaced_targets;  // parameter / input_scale: one input each

  for (std::size_t entry_index = 0; entry_index < inputs.size(); ++entry_index) {
    const UncertainOptions& entry = inputs[entry_index];
    require(!entry.name.empty(), entry, "name", "every uncertain input needs a name");
    require(input_names.insert(entry.name).second, entry, "name",
            "the name '" + entry.name + "' is used by another uncertain input");

    // Resolve every applies_to target first: a typo is the commonest mistake.
    std::vector<Target> resolved;
    for (std::size_t t = 0; t < entry.applies_to.size(); ++t) {
      const std::string& text = entry.applies_to[t];
      const std::size_t dot = text.find('.');
      const std::string kind_word = dot == std::string::npos ? text : text.substr(0, dot);
      const std::string name = dot == std::string::npos ? std::string() : text.substr(dot + 1);
      static const std::vector<std::string> kKinds = {"initial", "parameter", "input_scale", "input_bias",
                                                      "disturbance"};
      Target target;
      target.text = text;
      const std::vector<std::string>* names = nullptr;
      if (kind_word == "initial") {
        target.kind = TargetKind::initial;
        names = &targets.states;
      } else if (kind_word == "parameter") {
        target.kind = TargetKind::parameter;
        names = &targets.parameters;
      } else if (kind_word == "input_scale") {
        target.kind = TargetKind::input_scale;
        names = &targets.inputs;
      } else if (kind_word == "input_bias") {
        target.kind = TargetKind::input_bias;
        names = &targets.inputs;
      } else if (kind_word == "disturbance") {
        target.kind = TargetKind::disturbance;
        names = &targets.states;
      } else {
        fail(entry, "applies_to", "unknown target kind '" + kind_word + "' in '" + text +
                                      "'; a target is initial.<state>, parameter.<name>, input_scale.<input>, "
                                      "input_bias.<input> or disturbance.<state>" +
                                      suggestion(kind_word, kKinds));
      }
      const auto found = std::find(names->begin(), names->end(), name);
      if (found == names->end()) {
        const char* what = names == &targets.states ? "state" : names == &targets.inputs ? "input" : "parameter";
        fail(entry, "applies_to", "'" + text + "': the model has no " + std::string(what) + " '" + name + "'" +
                                      suggestion(name, *names));
      }
      target.index = static_cast<int>(found - names->begin());
      if (target.kind == TargetKind::parameter || target.kind == TargetKind::input_scale)
        require(replaced_targets.insert(text).second, entry, "applies_to",
                "'" + text + "' is already set by another uncertain input; a parameter or input scale takes its "
                "value from one input only");
      if (target.kind == TargetKind::disturbance) {
        require(germ.n_times_ > 0, entry, "applies_to",
                "'" + text + "': the run has no disturbance grid to put a disturbance on");
        germ.needs_disturbance_ = true;
      }
      resolved.push_back(target);
    }

    Block block;
    block.input = entry.name;
    block.first = germ.dimension();
    const std::size_t n_targets = resolved.size();
    const bool vector_normal = entry.distribution == DistributionKind::normal && n_targets > 1;
    if (entry.distribution == DistributionKind::gaussian_process) {
      require(n_targets == 1 && resolved[0].kind == TargetKind::disturbance, entry, "applies_to",
              "a gaussian-process applies to exactly one disturbance.<state> target");
    } else if (!vector_normal) {
      require(n_targets == 1, entry, "applies_to",
              std::string("a ") + distribution_name(entry.distribution) +
                  " input applies to exactly one target (only a normal with a mean vector and covariance may "
                  "list one target per component)");
    }

    switch (entry.distribution) {
      case DistributionKind::normal: {
        if (!vector_normal) {
          require(entry.mean.size() == 1, entry, "mean",
                  entry.mean.size() > 1 ? "a normal with " + std::to_string(entry.mean.size()) +
                                              " mean values needs as many applies_to targets, one per component"
                                        : std::string("a normal needs a mean"));
          double std = 0.0;
          if (!entry.std.empty()) {
            require(entry.std.size() == 1, entry, "std", "a scalar normal needs one std value");
            std = entry.std[0];
          } else {
            require(entry.covariance.size() == 1 && entry.covariance[0].size() == 1, entry, "std",
                    "a scalar normal needs std (or a 1x1 covariance)");
            require(entry.covariance[0][0] > 0.0, entry, "covariance",
                    "the variance must be positive, got " + number(entry.covariance[0][0]));
            std = std::sqrt(entry.covariance[0][0]);
          }
          require(std > 0.0 && std::isfinite(std), entry, "std", "std must be positive, got " + number(std));
          block.map.offset = entry.mean[0];
          block.map.slope = std;
          germ.specs_.push_back({Family::hermite});
          germ.names_.push_back(entry.name);
          break;
        }
        const Eigen::Index n = static_cast<Eigen::Index>(n_targets);
        require(entry.mean.size() == n_targets, entry, "mean",
                "the mean has " + std::to_string(entry.mean.size()) + " values but applies_to names " +
                    std::to_string(n_targets) + " targets");
        Eigen::MatrixXd covariance(n, n);
        if (!entry.covariance.empty()) {
          require(entry.covariance.size() == n_targets, entry, "covariance",
                  "the covariance must be " + std::to_string(n) + "x" + std::to_string(n));
          for (Eigen::Index i = 0; i < n; ++i) {
            require(entry.covariance[i].size() == n_targets, entry, "covariance",
                    "the covariance must be " + std::to_string(n) + "x" + std::to_string(n));
            for (Eigen::Index j = 0; j < n; ++j) covariance(i, j) = entry.covariance[i][j];
          }
        } else {
          require(entry.std.size() == n_targets, entry, "std",
                  "a vector normal needs a covariance matrix or one std per component");
          covariance.setZero();
          for (Eigen::Index i = 0; i < n; ++i) covariance(i, i) = entry.std[i] * entry.std[i];
        }
        require(covariance.allFinite(), entry, "covariance", "the covariance has a value that is not finite");
        const double scale = covariance.cwiseAbs().maxCoeff();
        for (Eigen::Index i = 0; i < n; ++i)
          for (Eigen::Index j = 0; j < i; ++j)
            require(std::abs(covariance(i, j) - covariance(j, i)) <= kSymmetryTolerance * scale, entry,
                    "covariance",
                    "the covariance is not symmetric: entry [" + std::to_string(i) + "][" + std::to_string(j) +
                        "] = " + number(covariance(i, j)) + " but [" + std::to_string(j) + "][" +
                        std::to_string(i) + "] = " + number(covariance(j, i)));
        const Eigen::LLT<Eigen::MatrixXd> cholesky(covariance);
        require(cholesky.info() == Eigen::Success, entry, "covariance",
                "the covariance is not positive definite (a zero or perfectly correlated component has no "
                "germ variable of its own: drop it or add its variance)");
        block.kind = BlockKind::vector_normal;
        block.size = static_cast<int>(n);
        block.mean = Eigen::Map<const Eigen::VectorXd>(entry.mean.data(), n);
        block.factor = cholesky.matrixL();
        for (Eigen::Index k = 0; k < n; ++k) {
          germ.specs_.push_back({Family::hermite});
          germ.names_.push_back(entry.name + "[" + std::to_string(k) + "]");
        }
        break;
      }
      case DistributionKind::uniform:
        require(std::isfinite(entry.low) && std::isfinite(entry.high) && entry.low < entry.high, entry, "low",
                "need low < high, got low = " + number(entry.low) + ", high = " + number(entry.high));
        block.map.offset = 0.5 * (entry.low + entry.high);
        block.map.slope = 0.5 * (entry.high - entry.low);
        germ.specs_.push_back({Family::legendre});
        germ.names_.push_back(entry.name);
        break;
      case DistributionKind::beta:
        require(entry.alpha > 0.0 && entry.beta > 0.0, entry, "alpha",
                "alpha and beta must be positive, got alpha = " + number(entry.alpha) +
                    ", beta = " + number(entry.beta));
        require(std::isfinite(entry.low) && std::isfinite(entry.high) && entry.low < entry.high, entry, "low",
                "need low < high, got low = " + number(entry.low) + ", high = " + number(entry.high));
        // (ξ + 1)/2 ~ Beta(b + 1, a + 1) (germ/family.h), so b = alpha − 1, a = beta − 1.
        block.map.offset = 0.5 * (entry.low + entry.high);
        block.map.slope = 0.5 * (entry.high - entry.low);
        germ.specs_.push_back({Family::jacobi, entry.beta - 1.0, entry.alpha - 1.0});
        germ.names_.push_back(entry.name);
        break;
      case DistributionKind::gamma:
        require(entry.shape > 0.0 && entry.scale > 0.0, entry, "shape",
                "shape and scale must be positive, got shape = " + number(entry.shape) +
                    ", scale = " + number(entry.scale));
        block.map.offset = 0.0;
        block.map.slope = entry.scale;
        germ.specs_.push_back({Family::laguerre, entry.shape - 1.0, 0.0});
        germ.names_.push_back(entry.name);
        break;
      case DistributionKind::lognormal:
        require(std::isfinite(entry.mu), entry, "mu", "mu must be finite");
        require(entry.sigma > 0.0 && std::isfinite(entry.sigma), entry, "sigma",
                "sigma must be positive, got " + number(entry.sigma));
        block.map.kind = MapKind::lognormal;
        block.map.mu = entry.mu;
        block.map.sigma = entry.sigma;
        germ.specs_.push_back({Family::hermite});
        germ.names_.push_back(entry.name);
        break;
      case DistributionKind::truncated_normal: {
        require(entry.mean.size() == 1, entry, "mean", "a truncated-normal needs one mean value");
        require(entry.std.size() == 1 && entry.std[0] > 0.0 && std::isfinite(entry.std[0]), entry, "std",
                "a truncated-normal needs one positive std");
        require(std::isfinite(entry.low) && std::isfinite(entry.high) && entry.low < entry.high, entry, "low",
                "need low < high, got low = " + number(entry.low) + ", high = " + number(entry.high));
        block.map.kind = MapKind::truncated_normal;
        block.map.offset = entry.mean[0];
        block.map.slope = entry.std[0];
        block.map.low = entry.low;
        block.map.high = entry.high;
        // A window so far out that Φ underflows to the same value at both ends has
        // no representable mass: the case is almost surely a unit mistake.
        const double alpha = (entry.low - entry.mean[0]) / entry.std[0];
        const double beta = (entry.high - entry.mean[0]) / entry.std[0];
        const double mass = alpha >= 0.0 ? upper_tail(alpha) - upper_tail(beta) : lower_tail(beta) - lower_tail(alpha);
        require(mass > 0.0, entry, "low",
                "the window [" + number(entry.low) + ", " + number(entry.high) +
                    "] holds no representable probability of the normal(" + number(entry.mean[0]) + ", " +
                    number(entry.std[0]) + ")");
        // Density ratio over the window: the normal density peaks at the point of
        // the window nearest the mean and is least at the end farthest from it.
        const double nearest = alpha > 0.0 ? alpha : beta < 0.0 ? beta : 0.0;
        const double farthest = std::max(std::abs(alpha), std::abs(beta));
        block.map.uniform_germ =
            std::exp(-0.5 * (farthest * farthest - nearest * nearest)) >= kFlatTruncationRatio;
        germ.specs_.push_back({block.map.uniform_germ ? Family::legendre : Family::hermite});
        germ.names_.push_back(entry.name);
        break;
      }
      case DistributionKind::triangular:
        require(std::isfinite(entry.low) && std::isfinite(entry.high) && entry.low < entry.high, entry, "low",
                "need low < high, got low = " + number(entry.low) + ", high = " + number(entry.high));
        require(entry.low <= entry.mode && entry.mode <= entry.high, entry, "mode",
                "need low <= mode <= high, got mode = " + number(entry.mode));
        block.map.kind = MapKind::triangular;
        block.map.low = entry.low;
        block.map.mode = entry.mode;
        block.map.high = entry.high;
        germ.specs_.push_back({Family::hermite});
        germ.names_.push_back(entry.name);
        break;
      case DistributionKind::gaussian_process: {
        require(entry.std.size() == 1 && entry.std[0] > 0.0 && std::isfinite(entry.std[0]), entry, "std",
                "a gaussian-process needs one positive std");
        require(entry.correlation_time_in_seconds > 0.0 && std::isfinite(entry.correlation_time_in_seconds), entry,
                "correlation_time", "the correlation time must be positive, got " +
                                        number(entry.correlation_time_in_seconds));
        const KarhunenLoeveModes modes = karhunen_loeve_modes(entry.kernel, entry.std[0],
                                                              entry.correlation_time_in_seconds,
                                                              targets.disturbance_times);
        int kept = 0;
        if (entry.modes > 0) {
          require(entry.modes <= germ.n_times_, entry, "modes",
                  "asks for " + std::to_string(entry.modes) + " modes but the disturbance grid has only " +
                      std::to_string(germ.n_times_) + " points");
          kept = entry.modes;
        } else {
          require(entry.energy > 0.0 && entry.energy <= 1.0, entry, "energy",
                  "a gaussian-process needs modes > 0 or energy in (0, 1]");
          kept = modes_for_energy(modes, entry.energy);
        }
        block.kind = BlockKind::karhunen_loeve;
        block.size = kept;
        block.factor = modes.eigenfunctions.leftCols(kept) *
                       modes.eigenvalues.head(kept).cwiseSqrt().asDiagonal();
        germ.kl_.push_back({entry.name, kept, modes.cumulative_fraction(kept - 1)});
        germ.kl_blocks_.push_back(static_cast<int>(germ.blocks_.size()));
        for (int k = 0; k < kept; ++k) {
          germ.specs_.push_back({Family::hermite});
          germ.names_.push_back(entry.name + "[" + std::to_string(k) + "]");
        }
        break;
      }
    }
    block.targets = std::move(resolved);
    germ.blocks_.push_back(std::move(block));
  }
  return germ;
}

std::vector<std::string> Germ::input_names() const {
  std::vector<std::string> names;
  for (const Block& block : blocks_) names.push_back(block.input);
  return names;
}

std::vector<std::vector<int>> Germ::input_dimensions() const {
  std::vector<std::vector<int>> groups;
  for (std::size_t b = 0; b < blocks_.size(); ++b) {
    const int end = b + 1 < blocks_.size() ? blocks_[b + 1].first : dimension();
    std::vector<int> dims;
    for (int j = blocks_[b].first; j < end; ++j) dims.push_back(j);
    groups.push_back(std::move(dims));
  }
  return groups;
}

void Germ::add_to_target(const Target& target, double x, int n_times, model::Perturbation& perturbation) {
  switch (target.kind) {
    case TargetKind::initial: perturbation.initial_offset(target.index) += x; return;
    case TargetKind::parameter: perturbation.parameters(target.index) = x; return;
    case TargetKind::input_scale: perturbation.input_scale(target.index) = x; return;
    case TargetKind::input_bias: perturbation.input_bias(target.index) += x; return;
    case TargetKind::disturbance:
      for (int i = 0; i < n_times; ++i) perturbation.disturbance(i, target.index) += x;
      return;
  }
  throw std::logic_error("Germ::apply: unknown target kind");
}

void Germ::apply(const double* xi, model::Perturbation& perturbation) const {
  if (perturbation.initial_offset.size() != n_states_ || perturbation.parameters.size() != n_parameters_ ||
      perturbation.input_scale.size() != n_inputs_ || perturbation.input_bias.size() != n_inputs_)
    throw std::logic_error("Germ::apply: the perturbation does not match the target space the germ was built for");
  if (needs_disturbance_) {
    if (perturbation.disturbance.rows() == 0) perturbation.disturbance.setZero(n_times_, n_states_);
    if (perturbation.disturbance.rows() != n_times_ || perturbation.disturbance.cols() != n_states_)
      throw std::logic_error("Germ::apply: the disturbance is not [n_times, n_states]");
  }
  for (const Block& block : blocks_) {
    const double* x = xi + block.first;
    switch (block.kind) {
      case BlockKind::scalar: add_to_target(block.targets[0], block.map.value(x[0]), n_times_, perturbation); break;
      case BlockKind::vector_normal:
        // x = mean + L ξ with L lower triangular, component by component (no temporaries).
        for (int i = 0; i < block.size; ++i) {
          double value = block.mean(i);
          for (int j = 0; j <= i; ++j) value += block.factor(i, j) * x[j];
          add_to_target(block.targets[i], value, n_times_, perturbation);
        }
        break;
      case BlockKind::karhunen_loeve: {
        const int column = block.targets[0].index;
        for (int k = 0; k < block.size; ++k)
          for (int i = 0; i < n_times_; ++i) perturbation.disturbance(i, column) += block.factor(i, k) * x[k];
        break;
      }
    }
  }
}

void Germ::from_standard_normal(const double* z, double* xi) const {
  for (std::size_t j = 0; j < specs_.size(); ++j) xi[j] = germ::from_standard_normal(specs_[j], z[j]);
}

void Germ::sample_standard_normal(std::uint64_t seed, std::uint64_t sample, double* z) const {
  const CounterRng rng(seed);
  for (std::size_t j = 0; j < specs_.size(); ++j) z[j] = rng.normal(sample, j);
}

std::vector<PhysicalValue> Germ::physical_values(const double* xi) const {
  std::vector<PhysicalValue> values;
  for (const Block& block : blocks_) {
    const double* x = xi + block.first;
    if (block.kind == BlockKind::scalar) {
      values.push_back({block.input, block.targets[0].text, block.map.value(x[0])});
    } else if (block.kind == BlockKind::vector_normal) {
      for (int i = 0; i < block.size; ++i) {
        double value = block.mean(i);
        for (int j = 0; j <= i; ++j) value += block.factor(i, j) * x[j];
        values.push_back({block.input, block.targets[i].text, value});
      }
    }
  }
  return values;
}

const Eigen::MatrixXd& Germ::karhunen_loeve_basis(int index) const {
  if (index < 0 || index >= static_cast<int>(kl_blocks_.size()))
    throw std::logic_error("Germ::karhunen_loeve_basis: index out of range");
  return blocks_[kl_blocks_[index]].factor;
}

Eigen::MatrixXd germ_points(const Germ& germ, const Eigen::MatrixXd& z) {
  const int d = germ.dimension();
  Eigen::MatrixXd xi(z.rows(), d);
  std::vector<double> zi(static_cast<std::size_t>(d)), x(static_cast<std::size_t>(d));
  for (Eigen::Index i = 0; i < z.rows(); ++i) {
    for (int j = 0; j < d; ++j) zi[static_cast<std::size_t>(j)] = z(i, j);
    if (d > 0) germ.from_standard_normal(zi.data(), x.data());
    for (int j = 0; j < d; ++j) xi(i, j) = x[static_cast<std::size_t>(j)];
  }
  return xi;
}

Eigen::MatrixXd standard_normal_points(const CounterRng& rng, long long first, Eigen::Index n, int d) {
  Eigen::MatrixXd z(n, d);
  for (Eigen::Index i = 0; i < n; ++i)
    for (int j = 0; j < d; ++j)
      z(i, j) = rng.normal(static_cast<std::uint64_t>(first + i), static_cast<std::uint64_t>(j));
  return z;
}

}  // namespace sigmatube::germ
