// SPDX-License-Identifier: MIT
#include "sigmatube/model/lane_expression.h"

#include <muParser.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <numbers>

#include "sigmatube/core/counter_rng.h"

namespace sigmatube::model {
namespace {

using Op = LaneExpression::Op;

struct NamedFunction {
  const char* name;
  double (*f)(double);
};
double sign_of(double x) { return x > 0 ? 1.0 : (x < 0 ? -1.0 : 0.0); }
double ln(double x) { return std::log(x); }
double log2_of(double x) { return std::log2(x); }
double log10_of(double x) { return std::log10(x); }
const NamedFunction kFunctions[] = {
    {"sin", [](double x) { return std::sin(x); }},     {"cos", [](double x) { return std::cos(x); }},
    {"tan", [](double x) { return std::tan(x); }},     {"asin", [](double x) { return std::asin(x); }},
    {"acos", [](double x) { return std::acos(x); }},   {"atan", [](double x) { return std::atan(x); }},
    {"sinh", [](double x) { return std::sinh(x); }},   {"cosh", [](double x) { return std::cosh(x); }},
    {"tanh", [](double x) { return std::tanh(x); }},   {"asinh", [](double x) { return std::asinh(x); }},
    {"acosh", [](double x) { return std::acosh(x); }}, {"atanh", [](double x) { return std::atanh(x); }},
    {"exp", [](double x) { return std::exp(x); }},     {"ln", ln},
    {"log", ln},                                       {"log2", log2_of},
    {"log10", log10_of},                               {"sqrt", [](double x) { return std::sqrt(x); }},
    {"abs", [](double x) { return std::fabs(x); }},    {"sign", sign_of},
    {"rint", [](double x) { return std::rint(x); }},
};

// Recursive descent, muparser's precedence: + − < * / < unary ± < ^ (right
// associative). The self-check against muparser catches any other reading.
class Compiler {
 public:
  Compiler(const std::string& text, const std::vector<std::string>& names) : s_(text), names_(names) {}

  bool compile(std::vector<Op>& ops, int& depth) {
    if (!expression()) return false;
    skip();
    if (pos_ != s_.size()) return false;
    ops = std::move(ops_);
    depth = max_depth_;
    return true;
  }

 private:
  void skip() {
    while (pos_ < s_.size() && std::isspace(static_cast<unsigned char>(s_[pos_]))) ++pos_;
  }
  bool accept(char c) {
    skip();
    if (pos_ < s_.size() && s_[pos_] == c) {
      ++pos_;
      return true;
    }
    return false;
  }
  void emit(Op op, int stack_change) {
    ops_.push_back(op);
    depth_ += stack_change;
    max_depth_ = std::max(max_depth_, depth_);
  }
  bool expression() {
    if (!term()) return false;
    for (;;) {
      if (accept('+')) {
        if (!term()) return false;
        emit({Op::Kind::add}, -1);
      } else if (accept('-')) {
        if (!term()) return false;
        emit({Op::Kind::sub}, -1);
      } else {
        return true;
      }
    }
  }
  bool term() {
    if (!unary()) return false;
    for (;;) {
      if (accept('*')) {
        if (!unary()) return false;
        emit({Op::Kind::mul}, -1);
      } else if (accept('/')) {
        if (!unary()) return false;
        emit({Op::Kind::div}, -1);
      } else {
        return true;
      }
    }
  }
  bool unary() {
    if (accept('-')) {
      if (!unary()) return false;
      emit({Op::Kind::neg}, 0);
      return true;
    }
    if (accept('+')) return unary();
    return power();
  }
  bool power() {
    if (!primary()) return false;
    if (accept('^')) {
      if (!unary()) return false;  // right associative, signed exponent allowed
      emit({Op::Kind::pow}, -1);
    }
    return true;
  }
  bool primary() {
    skip();
    if (pos_ >= s_.size()) return false;
    const char c = s_[pos_];
    if (accept('(')) return expression() && accept(')');
    if (std::isdigit(static_cast<unsigned char>(c)) || c == '.') {
      const char* begin = s_.c_str() + pos_;
      char* end = nullptr;
      const double v = std::strtod(begin, &end);
      if (end == begin) return false;
      pos_ += static_cast<std::size_t>(end - begin);
      emit({Op::Kind::constant, v}, 1);
      return true;
    }
    if (std::isalpha(static_cast<unsigned char>(c)) || c == '_') {
      std::size_t end = pos_;
      while (end < s_.size() && (std::isalnum(static_cast<unsigned char>(s_[end])) || s_[end] == '_' || s_[end] == '.')) ++end;
      const std::string name = s_.substr(pos_, end - pos_);
      pos_ = end;
      if (accept('(')) return call(name);
      const auto it = std::find(names_.begin(), names_.end(), name);
      if (it != names_.end()) {
        emit({Op::Kind::variable, 0.0, static_cast<int>(it - names_.begin())}, 1);
        return true;
      }
      if (name == "_pi") {
        emit({Op::Kind::constant, std::numbers::pi}, 1);
        return true;
      }
      if (name == "_e") {
        emit({Op::Kind::constant, std::numbers::e}, 1);
        return true;
      }
      return false;
    }
    return false;
  }
  bool call(const std::string& name) {
    int args = 0;
    if (!accept(')')) {
      do {
        if (!expression()) return false;
        ++args;
      } while (accept(','));
      if (!accept(')')) return false;
    }
    for (const auto& f : kFunctions) {
      if (name == f.name) {
        if (args != 1) return false;
        emit({Op::Kind::function, 0.0, 1, f.f}, 0);
        return true;
      }
    }
    Op::Kind kind;
    if (name == "min") kind = Op::Kind::min;
    else if (name == "max") kind = Op::Kind::max;
    else if (name == "sum") kind = Op::Kind::sum;
    else if (name == "avg") kind = Op::Kind::avg;
    else return false;
    if (args < 1) return false;
    emit({kind, 0.0, args}, 1 - args);
    return true;
  }

  const std::string& s_;
  const std::vector<std::string>& names_;
  std::size_t pos_ = 0;
  std::vector<Op> ops_;
  int depth_ = 0, max_depth_ = 0;
};

// Agreement with muparser, relative to max(1, |value|): rounding differences of
// a few operations, never a different reading of the expression.
constexpr double kSelfCheckTolerance = 1e-12;
constexpr int kSelfCheckPoints = 16;

}  // namespace

std::optional<LaneExpression> LaneExpression::compile(const std::string& text, const std::vector<std::string>& names) {
  LaneExpression program;
  Compiler compiler(text, names);
  if (!compiler.compile(program.ops_, program.depth_) || program.ops_.empty()) return std::nullopt;

  // Self-check against muparser at points from the counter-based generator.
  try {
    std::vector<double> values(names.size());
    mu::Parser parser;
    for (std::size_t v = 0; v < names.size(); ++v) parser.DefineVar(names[v], &values[v]);
    parser.SetExpr(text);
    const CounterRng rng(0x1A2E);
    std::vector<const double*> pointers(names.size());
    std::vector<double> scratch(program.scratch_size(1));
    for (int k = 0; k < kSelfCheckPoints; ++k) {
      for (std::size_t v = 0; v < names.size(); ++v) {
        values[v] = 2.0 * rng.uniform(static_cast<std::uint64_t>(k), v) - 1.0;
        if (k % 2) values[v] *= 10.0;
        pointers[v] = &values[v];
      }
      const double expected = parser.Eval();
      double got = 0.0;
      program.evaluate(pointers.data(), 1, &got, scratch.data());
      if (std::isnan(expected) && std::isnan(got)) continue;
      if (!(std::abs(got - expected) <= kSelfCheckTolerance * std::max(1.0, std::abs(expected)))) return std::nullopt;
    }
  } catch (const mu::ParserError&) {
    return std::nullopt;
  }
  return program;
}

void LaneExpression::evaluate(const double* const* variables, std::size_t lanes, double* result, double* scratch) const {
  int top = -1;  // stack slot s holds lanes values at scratch + s·lanes
  auto slot = [&](int s) { return scratch + static_cast<std::size_t>(s) * lanes; };
  for (const Op& op : ops_) {
    switch (op.kind) {
      case Op::Kind::constant: {
        double* a = slot(++top);
        for (std::size_t l = 0; l < lanes; ++l) a[l] = op.value;
        break;
      }
      case Op::Kind::variable: {
        double* a = slot(++top);
        const double* v = variables[op.index];
        for (std::size_t l = 0; l < lanes; ++l) a[l] = v[l];
        break;
      }
      case Op::Kind::add: case Op::Kind::sub: case Op::Kind::mul: case Op::Kind::div: case Op::Kind::pow: {
        double* a = slot(top - 1);
        const double* b = slot(top);
        --top;
        switch (op.kind) {
          case Op::Kind::add: for (std::size_t l = 0; l < lanes; ++l) a[l] += b[l]; break;
          case Op::Kind::sub: for (std::size_t l = 0; l < lanes; ++l) a[l] -= b[l]; break;
          case Op::Kind::mul: for (std::size_t l = 0; l < lanes; ++l) a[l] *= b[l]; break;
          case Op::Kind::div: for (std::size_t l = 0; l < lanes; ++l) a[l] /= b[l]; break;
          default: for (std::size_t l = 0; l < lanes; ++l) a[l] = std::pow(a[l], b[l]); break;
        }
        break;
      }
      case Op::Kind::neg: {
        double* a = slot(top);
        for (std::size_t l = 0; l < lanes; ++l) a[l] = -a[l];
        break;
      }
      case Op::Kind::function: {
        double* a = slot(top);
        for (std::size_t l = 0; l < lanes; ++l) a[l] = op.function(a[l]);
        break;
      }
      case Op::Kind::min: case Op::Kind::max: case Op::Kind::sum: case Op::Kind::avg: {
        const int first = top - op.index + 1;
        double* a = slot(first);
        for (int s = first + 1; s <= top; ++s) {
          const double* b = slot(s);
          if (op.kind == Op::Kind::min) for (std::size_t l = 0; l < lanes; ++l) a[l] = std::min(a[l], b[l]);
          else if (op.kind == Op::Kind::max) for (std::size_t l = 0; l < lanes; ++l) a[l] = std::max(a[l], b[l]);
          else for (std::size_t l = 0; l < lanes; ++l) a[l] += b[l];
        }
        if (op.kind == Op::Kind::avg) for (std::size_t l = 0; l < lanes; ++l) a[l] /= op.index;
        top = first;
        break;
      }
    }
  }
  const double* a = slot(0);
  for (std::size_t l = 0; l < lanes; ++l) result[l] = a[l];
}

}  // namespace sigmatube::model
