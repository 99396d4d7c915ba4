#pragma once
// Naming the entry that breaks a computation: when the engine declares step-size underflow or a
// non-finite transition matrix, the model is evaluated at and just beyond that time, and the
// first entry that is not finite, too large to compute with, or growing without bound is named
// with the time where it does so (located by bisection or by a search for its peak).
#include <functional>
#include <string>
#include <vector>

namespace ordex {

/// Entries beyond this magnitude overflow in the products a step forms (1e150^2 > 1e300).
constexpr double kHugeEntry = 1e150;

/// Evaluates every entry at t into VALUES (same order as the names); returns false when the
/// model cannot be evaluated there (a table outside its times, an exception).
using EntryEvaluator = std::function<bool(double t, std::vector<double>& values)>;

/// "NAME is not finite at t = T", "NAME = V is too large at t = T ...", "NAME grows without
/// bound near t = T (|value| reaches V)", or empty. NAMES label the entries; T is where the
/// engine stopped; DIRECTION the sense of integration.
std::string diagnose_entry_values(const std::vector<std::string>& names, const EntryEvaluator& eval, double t,
                                  double direction);

}  // namespace ordex
