// SPDX-License-Identifier: MIT
#pragma once
// An expression of an expression model compiled once into a postfix program
// whose every instruction runs over a whole batch of lanes (structure of arrays),
// so the interpreter's per-instruction cost is paid once per batch instead of
// once per run, and the lane loops vectorize.
//
// Why not muparser for batches: muparser interprets its byte code per value (also
// in its bulk mode), measured here at several times plain C++ per expression.
// muparser still parses and validates every expression of the case first
// (model/expression_model.h); this compiler accepts the common subset —
// numbers, variables, + − * / ^, unary ±, parentheses, _pi, _e, the one-argument
// functions sin cos tan asin acos atan sinh cosh tanh asinh acosh atanh exp ln
// log log2 log10 sqrt abs sign rint and min, max, sum, avg — and checks itself
// against muparser at random points before it is used. Anything else (or any
// disagreement beyond rounding) returns no program and the caller keeps muparser.
#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <vector>

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

class LaneExpression {
 public:
  /// Compiles `text` over `names` (variable v = names[v]). std::nullopt when the
  /// text is outside the subset above or disagrees with muparser (relative 1e-12).
  static std::optional<LaneExpression> compile(const std::string& text, const std::vector<std::string>& names);

  /// result[l] for l < lanes; variables[v] points at `lanes` values of variable v.
  /// `scratch` must hold scratch_size(lanes) doubles. No allocation.
  void evaluate(const double* const* variables, std::size_t lanes, double* result, double* scratch) const;
  std::size_t scratch_size(std::size_t lanes) const { return static_cast<std::size_t>(slots_) * lanes; }
  /// Number of lane instructions (each runs over all lanes).
  std::size_t instruction_count() const { return code_.size(); }

  /// Postfix form, as parsed.
  struct Op {
    enum class Kind { constant, variable, add, sub, mul, div, pow, neg, function, min, max, sum, avg } kind;
    double value = 0.0;            // constant
    int index = 0;                 // variable index, or argument count
    double (*function)(double) = nullptr;
  };
  /// An operand of a lane instruction: a scratch slot, a variable or a constant.
  struct Operand {
    enum class Kind { slot, variable, constant } kind = Kind::slot;
    int index = 0;
    double value = 0.0;
  };
  /// Register form, run: out slot = a (op) b over all lanes. Variables and
  /// constants are read in place (no copies onto a stack); n-ary min, max, sum
  /// and avg become chains of binary instructions in muparser's order.
  struct Instruction {
    enum class Kind { copy, add, sub, mul, div, pow, square, neg, function, min, max } kind;
    int out = 0;
    Operand a, b;
    double (*function)(double) = nullptr;
  };

  /// The register form that evaluate() runs, and its number of slots (slot 0 is
  /// the result), for lane kernels that run it in their own blocks.
  const std::vector<Instruction>& instructions() const { return code_; }
  int slot_count() const { return slots_; }

 private:
  static std::vector<Instruction> to_registers(const std::vector<Op>& ops, int& slots);
  std::vector<Instruction> code_;
  int slots_ = 0;
};

}  // namespace sigmatube::model
