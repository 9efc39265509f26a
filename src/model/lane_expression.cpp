// SPDX-License-Identifier: MIT
#include "sigmatube/model/lane_expression.h"

#include <muParser.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <numbers>

#include "sigmatube/core/counter_rng.h"
#include "lane_kernels.h"

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
  std::vector<Op> ops;
  int depth = 0;
  if (!compiler.compile(ops, depth) || ops.empty()) return std::nullopt;
  program.code_ = to_registers(ops, program.slots_);

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

// Postfix to register form: the stack is simulated at compile time with
// operand descriptors, so pushing a variable or a constant costs nothing at run
// time; an operation at stack position p writes slot p.
std::vector<LaneExpression::Instruction> LaneExpression::to_registers(const std::vector<Op>& ops, int& slots) {
  using I = Instruction;
  std::vector<I> code;
  std::vector<Operand> stack;
  slots = 1;
  auto result_slot = [&](std::size_t position) {
    slots = std::max(slots, static_cast<int>(position) + 1);
    return Operand{Operand::Kind::slot, static_cast<int>(position), 0.0};
  };
  auto binary = [&](I::Kind kind) {
    const Operand b = stack.back();
    stack.pop_back();
    const Operand a = stack.back();
    const std::size_t p = stack.size() - 1;
    if (kind == I::Kind::pow && b.kind == Operand::Kind::constant && b.value == 2.0) {
      code.push_back({I::Kind::square, static_cast<int>(p), a, {}, nullptr});  // muparser's x^2 is x·x too
    } else {
      code.push_back({kind, static_cast<int>(p), a, b, nullptr});
    }
    stack.back() = result_slot(p);
  };
  for (const Op& op : ops) {
    switch (op.kind) {
      case Op::Kind::constant: stack.push_back({Operand::Kind::constant, 0, op.value}); break;
      case Op::Kind::variable: stack.push_back({Operand::Kind::variable, op.index, 0.0}); break;
      case Op::Kind::add: binary(I::Kind::add); break;
      case Op::Kind::sub: binary(I::Kind::sub); break;
      case Op::Kind::mul: binary(I::Kind::mul); break;
      case Op::Kind::div: binary(I::Kind::div); break;
      case Op::Kind::pow: binary(I::Kind::pow); break;
      case Op::Kind::neg: case Op::Kind::function: {
        const std::size_t p = stack.size() - 1;
        code.push_back({op.kind == Op::Kind::neg ? I::Kind::neg : I::Kind::function, static_cast<int>(p), stack.back(), {},
                        op.function});
        stack.back() = result_slot(p);
        break;
      }
      case Op::Kind::min: case Op::Kind::max: case Op::Kind::sum: case Op::Kind::avg: {
        // Left to right, as the stack loop of the postfix form: a = a (op) b for each further argument.
        const std::size_t first = stack.size() - static_cast<std::size_t>(op.index);
        const I::Kind kind = op.kind == Op::Kind::min ? I::Kind::min : op.kind == Op::Kind::max ? I::Kind::max : I::Kind::add;
        Operand acc = stack[first];
        for (std::size_t s = first + 1; s < stack.size(); ++s) {
          code.push_back({kind, static_cast<int>(first), acc, stack[s], nullptr});
          acc = result_slot(first);
        }
        if (op.kind == Op::Kind::avg) {
          code.push_back({I::Kind::div, static_cast<int>(first), acc, {Operand::Kind::constant, 0, static_cast<double>(op.index)}, nullptr});
          acc = result_slot(first);
        }
        stack.resize(first + 1);
        stack.back() = acc;
        break;
      }
    }
  }
  if (stack.back().kind != Operand::Kind::slot) code.push_back({I::Kind::copy, 0, stack.back(), {}, nullptr});
  return code;
}

namespace {
using Instruction = LaneExpression::Instruction;
using IK = Instruction::Kind;

// The lane loops, multiversioned like the other lane kernels (AVX2 without FMA
// and the baseline, bit-identical). `a`, `b` arrays; `c` a constant.
SIGMATUBE_LANE_TARGETS
void lanes_aa(IK kind, std::size_t n, const double* a, const double* b, double* out) {
  switch (kind) {
    case IK::add: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] + b[l]; break;
    case IK::sub: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] - b[l]; break;
    case IK::mul: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] * b[l]; break;
    case IK::div: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] / b[l]; break;
    case IK::min: for (std::size_t l = 0; l < n; ++l) out[l] = b[l] < a[l] ? b[l] : a[l]; break;  // std::min
    case IK::max: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] < b[l] ? b[l] : a[l]; break;  // std::max
    default: for (std::size_t l = 0; l < n; ++l) out[l] = std::pow(a[l], b[l]); break;
  }
}
SIGMATUBE_LANE_TARGETS
void lanes_ac(IK kind, std::size_t n, const double* a, double c, double* out) {
  switch (kind) {
    case IK::add: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] + c; break;
    case IK::sub: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] - c; break;
    case IK::mul: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] * c; break;
    case IK::div: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] / c; break;
    case IK::min: for (std::size_t l = 0; l < n; ++l) out[l] = c < a[l] ? c : a[l]; break;
    case IK::max: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] < c ? c : a[l]; break;
    default: for (std::size_t l = 0; l < n; ++l) out[l] = std::pow(a[l], c); break;
  }
}
SIGMATUBE_LANE_TARGETS
void lanes_ca(IK kind, std::size_t n, double c, const double* b, double* out) {
  switch (kind) {
    case IK::add: for (std::size_t l = 0; l < n; ++l) out[l] = c + b[l]; break;
    case IK::sub: for (std::size_t l = 0; l < n; ++l) out[l] = c - b[l]; break;
    case IK::mul: for (std::size_t l = 0; l < n; ++l) out[l] = c * b[l]; break;
    case IK::div: for (std::size_t l = 0; l < n; ++l) out[l] = c / b[l]; break;
    case IK::min: for (std::size_t l = 0; l < n; ++l) out[l] = b[l] < c ? b[l] : c; break;
    case IK::max: for (std::size_t l = 0; l < n; ++l) out[l] = c < b[l] ? b[l] : c; break;
    default: for (std::size_t l = 0; l < n; ++l) out[l] = std::pow(c, b[l]); break;
  }
}
SIGMATUBE_LANE_TARGETS
void lanes_unary(IK kind, std::size_t n, const double* a, double* out) {
  switch (kind) {
    case IK::neg: for (std::size_t l = 0; l < n; ++l) out[l] = -a[l]; break;
    case IK::square: for (std::size_t l = 0; l < n; ++l) out[l] = a[l] * a[l]; break;
    default: for (std::size_t l = 0; l < n; ++l) out[l] = a[l]; break;
  }
}
}  // namespace

void LaneExpression::evaluate(const double* const* variables, std::size_t lanes, double* result, double* scratch) const {
  // Slot 0 is the result: written straight into `result`.
  auto slot = [&](int s) { return s == 0 ? result : scratch + static_cast<std::size_t>(s) * lanes; };
  auto array = [&](const Operand& o) -> const double* {
    return o.kind == Operand::Kind::variable ? variables[o.index] : slot(o.index);
  };
  for (const Instruction& in : code_) {
    double* out = slot(in.out);
    const bool a_const = in.a.kind == Operand::Kind::constant;
    switch (in.kind) {
      case IK::copy: case IK::neg: case IK::square:
        if (a_const) {
          const double v = in.kind == IK::neg ? -in.a.value : in.kind == IK::square ? in.a.value * in.a.value : in.a.value;
          std::fill(out, out + lanes, v);
        } else {
          lanes_unary(in.kind, lanes, array(in.a), out);
        }
        break;
      case IK::function:
        if (a_const) {
          std::fill(out, out + lanes, in.function(in.a.value));
        } else {
          const double* a = array(in.a);
          for (std::size_t l = 0; l < lanes; ++l) out[l] = in.function(a[l]);
        }
        break;
      default: {
        const bool b_const = in.b.kind == Operand::Kind::constant;
        if (a_const && b_const) {
          double v = 0.0;
          lanes_ac(in.kind, 1, &in.a.value, in.b.value, &v);
          std::fill(out, out + lanes, v);
        } else if (b_const) {
          lanes_ac(in.kind, lanes, array(in.a), in.b.value, out);
        } else if (a_const) {
          lanes_ca(in.kind, lanes, in.a.value, array(in.b), out);
        } else {
          lanes_aa(in.kind, lanes, array(in.a), array(in.b), out);
        }
        break;
      }
    }
  }
}

}  // namespace sigmatube::model
