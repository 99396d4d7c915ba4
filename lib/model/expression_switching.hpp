#pragma once
// Where an expression may jump or kink: the switching functions of its non-smooth constructs,
// found from the text (the same grammar the expression parser accepts).
//
//   a < b, a <= b, ... (also inside `c ? x : y`)  ->  the sign of (a) - (b) changes
//   abs(x)                                        ->  the sign of x changes (a kink)
//   min(a, b, ...), max(a, b, ...)                ->  the sign of (a) - (b) for each pair (kinks)
//   floor(x)                                      ->  floor(x) changes (jumps)
//   c ? x : y, a && b, a || b with c (a, b) not a comparison  ->  c == 0 changes
//
// The model turns each function into an Expression against its own scope and locates, over a
// window, the times where its level changes (expression_system.cpp).
#include <string>
#include <vector>

namespace ordex {

enum class SwitchKind {
  Sign,     ///< level = sign(value)
  Floor,    ///< level = floor(value)
  Nonzero,  ///< level = (value != 0)
};

struct SwitchingFunction {
  SwitchKind kind = SwitchKind::Sign;
  std::string text;       ///< the expression whose level is watched
  std::string construct;  ///< the construct as written, for messages ("t < 1", "abs(x)")
};

/// The switching functions of TEXT (an expression accepted by Expression), in text order,
/// duplicates removed. Returns an empty list for an expression without non-smooth constructs.
/// Throws InputError (naming WHERE) if the text cannot be split, which the Expression parser
/// would have refused already.
std::vector<SwitchingFunction> switching_functions(const std::string& text, const std::string& where);

/// The level of KIND for VALUE (sign, floor or nonzero), as a number to compare.
double switch_level(SwitchKind kind, double value);

}  // namespace ordex
