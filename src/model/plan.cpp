// SPDX-License-Identifier: MIT
#include "sigmatube/model/plan.h"

#include <algorithm>
#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "sigmatube/casefile/nearest_name.h"
#include "sigmatube/model/grid_walk.h"

namespace sigmatube::model {
namespace {

std::string trim(const std::string& s) {
  const auto begin = s.find_first_not_of(" \t\r");
  if (begin == std::string::npos) return "";
  const auto end = s.find_last_not_of(" \t\r");
  return s.substr(begin, end - begin + 1);
}

constexpr const char* kUtf8ByteOrderMark = "\xEF\xBB\xBF";

// A cell as it can be read in a message: control bytes and bytes outside
// ASCII shown as \xNN, at most 40 characters.
std::string visible(const std::string& cell) {
  std::string out;
  for (unsigned char c : cell) {
    if (out.size() >= 40) return out + "...";
    if (c >= 0x20 && c < 0x7f) {
      out += static_cast<char>(c);
    } else {
      static const char* digits = "0123456789ABCDEF";
      out += "\\x";
      out += digits[c >> 4];
      out += digits[c & 15];
    }
  }
  return out;
}

std::vector<std::string> split(const std::string& line) {
  std::vector<std::string> cells;
  std::string cell;
  std::istringstream in(line);
  while (std::getline(in, cell, ',')) cells.push_back(trim(cell));
  if (!line.empty() && line.back() == ',') cells.push_back("");
  return cells;
}

// Solves for the second derivatives M of the natural cubic spline through
// (t_i, y_i) with M_0 = M_{n-1} = 0 (tridiagonal Thomas algorithm).
Eigen::VectorXd natural_spline_second_derivatives(const std::vector<double>& t, const Eigen::VectorXd& y) {
  const std::size_t n = t.size();
  Eigen::VectorXd M = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(n));
  if (n < 3) return M;
  const std::size_t m = n - 2;
  std::vector<double> diag(m), upper(m), rhs(m);
  for (std::size_t i = 1; i + 1 < n; ++i) {
    const double h0 = t[i] - t[i - 1], h1 = t[i + 1] - t[i];
    diag[i - 1] = 2.0 * (h0 + h1);
    upper[i - 1] = h1;
    rhs[i - 1] = 6.0 * ((y(static_cast<Eigen::Index>(i + 1)) - y(static_cast<Eigen::Index>(i))) / h1 -
                        (y(static_cast<Eigen::Index>(i)) - y(static_cast<Eigen::Index>(i - 1))) / h0);
  }
  // Forward elimination; the lower diagonal entry of row r is h_{r} = t[r+1]-t[r].
  for (std::size_t r = 1; r < m; ++r) {
    const double lower = t[r + 1] - t[r];
    const double w = lower / diag[r - 1];
    diag[r] -= w * upper[r - 1];
    rhs[r] -= w * rhs[r - 1];
  }
  std::vector<double> sol(m);
  sol[m - 1] = rhs[m - 1] / diag[m - 1];
  for (std::size_t r = m - 1; r-- > 0;) sol[r] = (rhs[r] - upper[r] * sol[r + 1]) / diag[r];
  for (std::size_t i = 0; i < m; ++i) M(static_cast<Eigen::Index>(i + 1)) = sol[i];
  return M;
}

}  // namespace

Plan::Plan(const casefile::PlanOptions& options, const Model& model) : interpolation_(options.interpolation) {
  const std::string shown = options.file.empty() ? options.path : options.file;
  auto fail = [&](int line, const std::string& column, const std::string& message) -> InputError {
    return InputError(SourceLocation{shown, line, column.empty() ? "" : "column " + column}, message);
  };
  std::ifstream in(options.path);
  if (!in) throw fail(0, "", "cannot open the plan file (" + options.path + ")");

  const auto& states = model.state_names();
  const auto& inputs = model.input_names();
  std::vector<std::string> known(states);
  known.insert(known.end(), inputs.begin(), inputs.end());

  // Per column: +k = state k, -(k+1) = input k, 0 is `t` (column 0 only).
  std::vector<int> target;
  std::vector<std::string> header;
  std::vector<std::vector<double>> rows;
  std::vector<int> row_lines;
  std::string line;
  int line_number = 0;
  bool header_seen = false;
  while (std::getline(in, line)) {
    ++line_number;
    // A UTF-8 byte-order mark (as some spreadsheet programs write) is not part of the header.
    if (line_number == 1 && line.rfind(kUtf8ByteOrderMark, 0) == 0) line.erase(0, std::string(kUtf8ByteOrderMark).size());
    const std::string stripped = trim(line);
    if (stripped.empty() || stripped[0] == '#') continue;
    const auto cells = split(stripped);
    if (!header_seen) {
      header_seen = true;
      if (cells.empty() || cells[0] != "t")
        throw fail(line_number, cells.empty() ? "1" : "'" + visible(cells[0]) + "'", "the first column must be 't' (time in seconds)");
      target.push_back(0);
      header = cells;
      for (std::size_t c = 1; c < cells.size(); ++c) {
        const std::string& name = cells[c];
        const auto s = std::find(states.begin(), states.end(), name);
        const auto u = std::find(inputs.begin(), inputs.end(), name);
        int code = 0;
        if (s != states.end()) code = 1 + static_cast<int>(s - states.begin());
        else if (u != inputs.end()) code = -1 - static_cast<int>(u - inputs.begin());
        else
          throw fail(line_number, "'" + visible(name) + "'",
                     "names no state or input of model '" + model.name() + "'" + casefile::suggestion_or_list(name, known));
        if (std::find(target.begin(), target.end(), code) != target.end())
          throw fail(line_number, "'" + name + "'", "column repeated");
        target.push_back(code);
      }
      continue;
    }
    if (cells.size() != target.size()) {
      std::ostringstream message;
      message << "expected " << target.size() << " cells, found " << cells.size();
      throw fail(line_number, "", message.str());
    }
    std::vector<double> row(cells.size());
    for (std::size_t c = 0; c < cells.size(); ++c) {
      const char* begin = cells[c].c_str();
      char* end = nullptr;
      errno = 0;
      const double value = std::strtod(begin, &end);
      if (cells[c].empty() || end == begin || *end != '\0' || !std::isfinite(value))
        throw fail(line_number, "'" + header[c] + "'", "not a finite number: '" + cells[c] + "'");
      row[c] = value;
    }
    if (!rows.empty() && !(row[0] > rows.back()[0])) {
      std::ostringstream message;
      message << "times must increase strictly: t = " << row[0] << " after t = " << rows.back()[0]
              << " (line " << row_lines.back() << ")";
      throw fail(line_number, "'t'", message.str());
    }
    rows.push_back(std::move(row));
    row_lines.push_back(line_number);
  }
  if (!header_seen) throw fail(0, "", "the plan file is empty (a header row starting with 't' is required)");
  if (rows.size() < 2) throw fail(line_number, "", "a plan needs at least 2 rows of values");

  const auto knots = static_cast<Eigen::Index>(rows.size());
  times_.resize(rows.size());
  states_ = Eigen::MatrixXd::Zero(knots, static_cast<Eigen::Index>(states.size()));
  inputs_ = Eigen::MatrixXd::Zero(knots, static_cast<Eigen::Index>(inputs.size()));
  for (Eigen::Index k = 0; k < knots; ++k) {
    const auto& row = rows[static_cast<std::size_t>(k)];
    times_[static_cast<std::size_t>(k)] = row[0];
    for (std::size_t c = 1; c < row.size(); ++c) {
      if (target[c] > 0) states_(k, target[c] - 1) = row[c];
      else inputs_(k, -target[c] - 1) = row[c];
    }
  }
  prepare();
}

Plan::Plan(std::vector<double> times, Eigen::MatrixXd states, Eigen::MatrixXd inputs,
           casefile::Interpolation interpolation)
    : times_(std::move(times)), states_(std::move(states)), inputs_(std::move(inputs)), interpolation_(interpolation) {
  const auto knots = static_cast<Eigen::Index>(times_.size());
  if (times_.size() < 2) throw InputError("plan: at least 2 knots are required");
  if (states_.rows() != knots || inputs_.rows() != knots) throw InputError("plan: one row of states and inputs per knot");
  for (std::size_t k = 1; k < times_.size(); ++k)
    if (!(times_[k] > times_[k - 1])) throw InputError("plan: knot times must increase strictly");
  prepare();
}

void Plan::prepare() {
  state_rows_ = states_;
  input_rows_ = inputs_;
  if (interpolation_ != casefile::Interpolation::cubic) return;
  auto second = [&](const Eigen::MatrixXd& values) {
    Eigen::MatrixXd M(values.rows(), values.cols());
    for (Eigen::Index c = 0; c < values.cols(); ++c) M.col(c) = natural_spline_second_derivatives(times_, values.col(c));
    return M;
  };
  state_second_ = second(states_);
  input_second_ = second(inputs_);
  state_second_rows_ = state_second_;
  input_second_rows_ = input_second_;
}

void Plan::evaluate_columns(const KnotRows& values, const KnotRows& second, std::size_t k, double t,
                            double* out) const {
  const auto i = static_cast<Eigen::Index>(k);
  const double h = times_[k + 1] - times_[k];
  const double b = (t - times_[k]) / h;
  const double a = 1.0 - b;
  if (interpolation_ == casefile::Interpolation::linear) {
    for (Eigen::Index c = 0; c < values.cols(); ++c) out[c] = a * values(i, c) + b * values(i + 1, c);
    return;
  }
  // S(t) = a y_k + b y_{k+1} + ((a³ − a) M_k + (b³ − b) M_{k+1}) h²/6.
  const double ca = (a * a * a - a) * h * h / 6.0, cb = (b * b * b - b) * h * h / 6.0;
  for (Eigen::Index c = 0; c < values.cols(); ++c)
    out[c] = a * values(i, c) + b * values(i + 1, c) + ca * second(i, c) + cb * second(i + 1, c);
}

void Plan::evaluate(double t, double* reference_state, double* feedforward) const {
  const double clamped = std::clamp(t, times_.front(), times_.back());
  // Interval k with times_[k] ≤ t ≤ times_[k+1].
  auto it = std::upper_bound(times_.begin(), times_.end(), clamped);
  std::size_t k = it == times_.begin() ? 0 : static_cast<std::size_t>(it - times_.begin()) - 1;
  if (k + 1 >= times_.size()) k = times_.size() - 2;
  if (reference_state) evaluate_columns(state_rows_, state_second_rows_, k, clamped, reference_state);
  if (feedforward) evaluate_columns(input_rows_, input_second_rows_, k, clamped, feedforward);
}

void Plan::evaluate(double t, std::size_t& hint, double* reference_state, double* feedforward) const {
  const double clamped = std::clamp(t, times_.front(), times_.back());
  const std::size_t last = times_.size() - 2;
  // As evaluate(): upper_bound finds no knot above a NaN, hence the last interval.
  const std::size_t k = std::isnan(clamped) ? last : walk_to_interval(times_, clamped, last, hint);
  hint = k;
  if (reference_state) evaluate_columns(state_rows_, state_second_rows_, k, clamped, reference_state);
  if (feedforward) evaluate_columns(input_rows_, input_second_rows_, k, clamped, feedforward);
}

Eigen::VectorXd Plan::reference_state(double t) const {
  Eigen::VectorXd x(states_.cols());
  evaluate(t, x.data(), nullptr);
  return x;
}

Eigen::VectorXd Plan::feedforward(double t) const {
  Eigen::VectorXd u(inputs_.cols());
  evaluate(t, nullptr, u.data());
  return u;
}

}  // namespace sigmatube::model
