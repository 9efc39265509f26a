// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/constraint.h"

#include <muParser.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <mutex>
#include <sstream>
#include <stdexcept>

#include "sigmatube/core/error.h"
#include "clearance_kernels.h"

namespace sigmatube::constraints {
namespace {
using casefile::ConstraintKind;

constexpr double kPi = 3.14159265358979323846;

SourceLocation at_key(const SourceLocation& where, const std::string& key) {
  SourceLocation located = where;
  located.key = where.key.empty() ? key : where.key + "." + key;
  return located;
}


// One muparser instance with its own input buffers; muparser keeps evaluation
// state inside the parser, so concurrent callers each need one.
struct Evaluator {
  mu::Parser parser;
  std::vector<std::vector<double>> columns;  // one per used output
  std::vector<double> time;
  std::size_t capacity = 0;
};
}  // namespace

std::string expression_alias(const std::string& output_name) {
  std::string alias = output_name;
  std::replace(alias.begin(), alias.end(), '.', '_');
  return alias;
}

struct Constraint::Impl {
  casefile::ConstraintOptions options;
  std::vector<int> indices;  // output columns read
  std::pair<double, double> window{-std::numeric_limits<double>::infinity(),
                                   std::numeric_limits<double>::infinity()};
  // Geometry in the form the clearance uses.
  Eigen::VectorXd center, inverse_semi_axes, low, high, apex, axis_unit, normal;
  double radius = 0, min_semi_axis = 0, sin_half = 0, cos_half = 0, normal_norm = 0;
  // Expression: the aliases of the used outputs, in the order of `indices`.
  std::vector<std::string> aliases;
  mutable std::mutex pool_mutex;
  mutable std::vector<std::unique_ptr<Evaluator>> pool;

  std::unique_ptr<Evaluator> make_evaluator() const {
    auto evaluator = std::make_unique<Evaluator>();
    evaluator->columns.resize(aliases.size());
    bind(*evaluator, 1);
    evaluator->parser.SetExpr(options.clearance);
    return evaluator;
  }
  void bind(Evaluator& e, std::size_t n) const {
    if (n <= e.capacity) return;
    for (auto& column : e.columns) column.assign(n, 0.0);
    e.time.assign(n, 0.0);
    for (std::size_t k = 0; k < aliases.size(); ++k) e.parser.DefineVar(aliases[k], e.columns[k].data());
    e.parser.DefineVar("t", e.time.data());
    e.capacity = n;
  }
};

namespace {
void require_size(const casefile::ConstraintOptions& o, const std::vector<double>& v, std::size_t n,
                  const std::string& key) {
  if (v.size() != n) {
    std::ostringstream msg;
    msg << "constraint '" << o.name << "' (" << kind_name(o.type) << "): " << key << " has " << v.size()
        << " values but position has " << n;
    throw InputError(at_key(o.where, key), msg.str());
  }
}
Eigen::VectorXd to_vector(const std::vector<double>& v) {
  return Eigen::Map<const Eigen::VectorXd>(v.data(), static_cast<Eigen::Index>(v.size()));
}
}  // namespace

Constraint::Constraint(const casefile::ConstraintOptions& options, const std::vector<std::string>& output_names)
    : impl_(std::make_unique<Impl>()) {
  Impl& m = *impl_;
  m.options = options;
  const auto& o = options;
  auto find_output = [&](const std::string& name, const std::string& key) {
    const auto it = std::find(output_names.begin(), output_names.end(), name);
    if (it == output_names.end()) {
      std::ostringstream msg;
      msg << "constraint '" << o.name << "': '" << name << "' is not an output (outputs:";
      for (const auto& n : output_names) msg << ' ' << n;
      msg << ")";
      throw InputError(at_key(o.where, key), msg.str());
    }
    return static_cast<int>(it - output_names.begin());
  };
  if (!(o.max_probability > 0.0 && o.max_probability < 1.0)) {
    throw InputError(at_key(o.where, "max_probability"),
                     "constraint '" + o.name + "': max_probability must lie in (0, 1)");
  }
  if (o.window_in_seconds) {
    if (!(o.window_in_seconds->first <= o.window_in_seconds->second)) {
      throw InputError(at_key(o.where, "window"), "constraint '" + o.name + "': window end before its start");
    }
    m.window = *o.window_in_seconds;
  }
  const bool geometric = o.type != ConstraintKind::input_limit && o.type != ConstraintKind::expression;
  if (geometric) {
    if (o.position.empty()) {
      throw InputError(at_key(o.where, "position"), "constraint '" + o.name + "': position names no output");
    }
    for (const auto& name : o.position) m.indices.push_back(find_output(name, "position"));
  }
  const std::size_t n = o.position.size();
  switch (o.type) {
    case ConstraintKind::outside_sphere:
      require_size(o, o.center, n, "center");
      if (!(o.radius > 0.0)) throw InputError(at_key(o.where, "radius"), "constraint '" + o.name + "': radius must be > 0");
      m.center = to_vector(o.center);
      m.radius = o.radius;
      break;
    case ConstraintKind::outside_ellipsoid:
      require_size(o, o.center, n, "center");
      require_size(o, o.semi_axes, n, "semi_axes");
      for (double a : o.semi_axes) {
        if (!(a > 0.0)) throw InputError(at_key(o.where, "semi_axes"), "constraint '" + o.name + "': semi-axes must be > 0");
      }
      m.center = to_vector(o.center);
      m.inverse_semi_axes = to_vector(o.semi_axes).cwiseInverse();
      m.min_semi_axis = *std::min_element(o.semi_axes.begin(), o.semi_axes.end());
      break;
    case ConstraintKind::inside_box:
      require_size(o, o.low, n, "low");
      require_size(o, o.high, n, "high");
      for (std::size_t i = 0; i < n; ++i) {
        if (!(o.low[i] <= o.high[i])) throw InputError(at_key(o.where, "low"), "constraint '" + o.name + "': low > high");
      }
      m.low = to_vector(o.low);
      m.high = to_vector(o.high);
      break;
    case ConstraintKind::inside_cone: {
      require_size(o, o.apex, n, "apex");
      require_size(o, o.axis, n, "axis");
      m.apex = to_vector(o.apex);
      const Eigen::VectorXd axis = to_vector(o.axis);
      if (!(axis.norm() > 0.0)) throw InputError(at_key(o.where, "axis"), "constraint '" + o.name + "': axis is zero");
      m.axis_unit = axis / axis.norm();
      if (!(o.half_angle_deg > 0.0 && o.half_angle_deg < 90.0)) {
        throw InputError(at_key(o.where, "half_angle_deg"),
                         "constraint '" + o.name + "': half_angle_deg must lie in (0, 90)");
      }
      m.sin_half = std::sin(o.half_angle_deg * kPi / 180.0);
      m.cos_half = std::cos(o.half_angle_deg * kPi / 180.0);
      break;
    }
    case ConstraintKind::half_space:
      require_size(o, o.normal, n, "normal");
      m.normal = to_vector(o.normal);
      m.normal_norm = m.normal.norm();
      if (!(m.normal_norm > 0.0)) throw InputError(at_key(o.where, "normal"), "constraint '" + o.name + "': normal is zero");
      break;
    case ConstraintKind::input_limit:
      if (o.low.size() != 1 || o.high.size() != 1 || !(o.low[0] <= o.high[0])) {
        throw InputError(at_key(o.where, "low"), "constraint '" + o.name + "': input-limit needs one low ≤ one high");
      }
      m.indices.push_back(find_output("cmd." + o.input, "input"));
      break;
    case ConstraintKind::expression: {
      if (o.clearance.empty()) throw InputError(at_key(o.where, "clearance"), "constraint '" + o.name + "': empty clearance");
      // Aliases must be unique and must not shadow the time variable.
      for (std::size_t i = 0; i < output_names.size(); ++i) {
        const std::string alias = expression_alias(output_names[i]);
        if (alias == "t") {
          throw InputError(at_key(o.where, "clearance"),
                           "constraint '" + o.name + "': output '" + output_names[i] + "' clashes with the time variable t");
        }
        for (std::size_t j = 0; j < i; ++j) {
          if (expression_alias(output_names[j]) == alias) {
            throw InputError(at_key(o.where, "clearance"), "constraint '" + o.name + "': outputs '" + output_names[j] +
                                                               "' and '" + output_names[i] + "' share the expression name '" +
                                                               alias + "'");
          }
        }
      }
      try {
        mu::Parser probe;
        std::vector<double> dummy(output_names.size() + 1, 1.0);
        for (std::size_t i = 0; i < output_names.size(); ++i) probe.DefineVar(expression_alias(output_names[i]), &dummy[i]);
        probe.DefineVar("t", &dummy.back());
        probe.SetExpr(o.clearance);
        probe.Eval();  // forces the parse, so syntax errors surface here with their position
        const auto used = probe.GetUsedVar();
        for (std::size_t i = 0; i < output_names.size(); ++i) {
          const std::string alias = expression_alias(output_names[i]);
          if (used.count(alias)) {
            m.indices.push_back(static_cast<int>(i));
            m.aliases.push_back(alias);
          }
        }
      } catch (const mu::Parser::exception_type& e) {
        std::ostringstream msg;
        // muparser counts positions from 0 and usually names the position itself.
        msg << "constraint '" << o.name << "': clearance expression \"" << o.clearance << "\": " << e.GetMsg();
        if (e.GetMsg().find("position") == std::string::npos && e.GetPos() >= 0) {
          msg << " at position " << e.GetPos() << " (counted from 0)";
        }
        msg << " (names with '.' are written with '_', e.g. cmd_ax)";
        throw InputError(at_key(o.where, "clearance"), msg.str());
      }
      break;
    }
  }
}

Constraint::~Constraint() = default;
Constraint::Constraint(Constraint&&) noexcept = default;
Constraint& Constraint::operator=(Constraint&&) noexcept = default;
Constraint::Constraint(const Constraint& other) : impl_(std::make_unique<Impl>()) {
  const Impl& s = *other.impl_;
  Impl& m = *impl_;
  m.options = s.options;
  m.indices = s.indices;
  m.window = s.window;
  m.center = s.center;
  m.inverse_semi_axes = s.inverse_semi_axes;
  m.low = s.low;
  m.high = s.high;
  m.apex = s.apex;
  m.axis_unit = s.axis_unit;
  m.normal = s.normal;
  m.radius = s.radius;
  m.min_semi_axis = s.min_semi_axis;
  m.sin_half = s.sin_half;
  m.cos_half = s.cos_half;
  m.normal_norm = s.normal_norm;
  m.aliases = s.aliases;
}
Constraint& Constraint::operator=(const Constraint& other) {
  if (this != &other) *this = Constraint(other);
  return *this;
}

const std::string& Constraint::name() const { return impl_->options.name; }
casefile::ConstraintKind Constraint::type() const { return impl_->options.type; }
double Constraint::max_probability() const { return impl_->options.max_probability; }
casefile::ConstraintScope Constraint::scope() const { return impl_->options.scope; }
const SourceLocation& Constraint::where() const { return impl_->options.where; }
const casefile::ConstraintOptions& Constraint::options() const { return impl_->options; }
std::pair<double, double> Constraint::window() const { return impl_->window; }
const std::vector<int>& Constraint::output_indices() const { return impl_->indices; }

Constraint Constraint::with_output_columns(const std::vector<int>& column_of) const {
  Constraint moved(*this);
  for (int& index : moved.impl_->indices) {
    if (index < 0 || static_cast<std::size_t>(index) >= column_of.size() || column_of[static_cast<std::size_t>(index)] < 0)
      throw std::logic_error("Constraint::with_output_columns: an output it reads has no column");
    index = column_of[static_cast<std::size_t>(index)];
  }
  return moved;
}

bool Constraint::in_window(double t) const {
  const double tolerance = 1e-9 * std::max(1.0, std::abs(t));
  return t >= impl_->window.first - tolerance && t <= impl_->window.second + tolerance;
}

void Constraint::clearance(const Eigen::Ref<const Eigen::MatrixXd>& block, double t,
                           Eigen::Ref<Eigen::VectorXd> c) const {
  const Impl& m = *impl_;
  const Eigen::Index rows = block.rows();
  if (c.size() != rows) throw std::logic_error("Constraint::clearance: output vector size differs from block rows");
  for (int index : m.indices) {
    if (index >= block.cols()) throw std::logic_error("Constraint::clearance: block has too few output columns");
  }
  const std::size_t n = m.indices.size();
  // Positions of 2 or 3 coordinates: the column-wise kernels (same bits as the row loop below).
  if (kernels::supported(n) && rows > 0) {
    const double* x[3] = {nullptr, nullptr, nullptr};
    for (std::size_t k = 0; k < n; ++k) x[k] = block.col(m.indices[k]).data();
    const int nn = static_cast<int>(n);
    switch (m.options.type) {
      case ConstraintKind::outside_sphere: return kernels::sphere(nn, x, rows, m.center.data(), m.radius, c.data());
      case ConstraintKind::outside_ellipsoid:
        return kernels::ellipsoid(nn, x, rows, m.center.data(), m.inverse_semi_axes.data(), m.min_semi_axis, c.data());
      case ConstraintKind::inside_cone:
        return kernels::cone(nn, x, rows, m.apex.data(), m.axis_unit.data(), m.sin_half, m.cos_half, c.data());
      case ConstraintKind::half_space:
        return kernels::half_space(nn, x, rows, m.normal.data(), m.options.offset, m.normal_norm, c.data());
      default: break;
    }
  }
  auto position = [&](Eigen::Index row, Eigen::VectorXd& p) {
    for (std::size_t k = 0; k < n; ++k) p[static_cast<Eigen::Index>(k)] = block(row, m.indices[k]);
  };
  Eigen::VectorXd p(static_cast<Eigen::Index>(n));
  switch (m.options.type) {
    case ConstraintKind::outside_sphere:
      for (Eigen::Index i = 0; i < rows; ++i) {
        position(i, p);
        c[i] = (p - m.center).norm() - m.radius;
      }
      return;
    case ConstraintKind::outside_ellipsoid:
      for (Eigen::Index i = 0; i < rows; ++i) {
        position(i, p);
        c[i] = ((p - m.center).cwiseProduct(m.inverse_semi_axes).norm() - 1.0) * m.min_semi_axis;
      }
      return;
    case ConstraintKind::inside_box:
      // Written out per coordinate: this runs for millions of surrogate samples.
      for (Eigen::Index i = 0; i < rows; ++i) {
        double outside2 = 0.0, inside = std::numeric_limits<double>::infinity();
        for (std::size_t k = 0; k < n; ++k) {
          const Eigen::Index e = static_cast<Eigen::Index>(k);
          const double x = block(i, m.indices[k]);
          const double excess = std::max({m.low[e] - x, x - m.high[e], 0.0});
          outside2 += excess * excess;
          inside = std::min({inside, x - m.low[e], m.high[e] - x});
        }
        c[i] = outside2 > 0.0 ? -std::sqrt(outside2) : inside;
      }
      return;
    case ConstraintKind::inside_cone:
      for (Eigen::Index i = 0; i < rows; ++i) {
        position(i, p);
        p -= m.apex;  // p now holds v = p − apex
        const double h = p.dot(m.axis_unit);
        const double rho = (p - h * m.axis_unit).norm();
        const double across = h * m.sin_half - rho * m.cos_half;  // > 0 inside, distance to the generator line
        if (across >= 0.0) {
          c[i] = across;
        } else {
          const double along = h * m.cos_half + rho * m.sin_half;  // ≥ 0: the nearest surface point is on the generator, not the apex
          c[i] = along >= 0.0 ? across : -p.norm();
        }
      }
      return;
    case ConstraintKind::half_space:
      for (Eigen::Index i = 0; i < rows; ++i) {
        position(i, p);
        c[i] = (m.options.offset - m.normal.dot(p)) / m.normal_norm;
      }
      return;
    case ConstraintKind::input_limit: {
      const double low = m.options.low[0], high = m.options.high[0];
      for (Eigen::Index i = 0; i < rows; ++i) {
        const double u = block(i, m.indices[0]);
        c[i] = std::min(u - low, high - u);
      }
      return;
    }
    case ConstraintKind::expression: {
      if (rows == 0) return;
      std::unique_ptr<Evaluator> evaluator;
      {
        std::lock_guard<std::mutex> lock(m.pool_mutex);
        if (!m.pool.empty()) {
          evaluator = std::move(m.pool.back());
          m.pool.pop_back();
        }
      }
      try {
        if (!evaluator) evaluator = m.make_evaluator();
        m.bind(*evaluator, static_cast<std::size_t>(rows));
        for (std::size_t k = 0; k < n; ++k) {
          double* column = evaluator->columns[k].data();
          for (Eigen::Index i = 0; i < rows; ++i) column[i] = block(i, m.indices[k]);
        }
        std::fill(evaluator->time.begin(), evaluator->time.begin() + rows, t);
        std::vector<double> out(static_cast<std::size_t>(rows));
        evaluator->parser.Eval(out.data(), static_cast<int>(rows));
        for (Eigen::Index i = 0; i < rows; ++i) c[i] = out[static_cast<std::size_t>(i)];
      } catch (const mu::Parser::exception_type& e) {
        throw NumericalError("constraint '" + m.options.name + "': evaluating the clearance failed: " + e.GetMsg(), -1, t);
      }
      std::lock_guard<std::mutex> lock(m.pool_mutex);
      m.pool.push_back(std::move(evaluator));
      return;
    }
  }
  throw std::logic_error("Constraint::clearance: unknown constraint type");
}

std::string kind_name(casefile::ConstraintKind kind) {
  switch (kind) {
    case ConstraintKind::outside_sphere: return "outside-sphere";
    case ConstraintKind::outside_ellipsoid: return "outside-ellipsoid";
    case ConstraintKind::inside_box: return "inside-box";
    case ConstraintKind::inside_cone: return "inside-cone";
    case ConstraintKind::half_space: return "half-space";
    case ConstraintKind::input_limit: return "input-limit";
    case ConstraintKind::expression: return "expression";
  }
  return "unknown";
}

}  // namespace sigmatube::constraints
