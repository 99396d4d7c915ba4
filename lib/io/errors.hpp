#pragma once
// The two kinds of failure the toolkit reports, and the exit status each maps to
// (CONTRACT.md: 2 = bad usage or bad input, 3 = numerical failure).
#include <stdexcept>
#include <string>

namespace ordex {

/// Every failure the library reports; catch this to handle both kinds below.
class Error : public std::runtime_error {
 public:
  explicit Error(const std::string& what) : std::runtime_error(what) {}
};

/// Bad usage or bad input: malformed or inconsistent model, unknown symbol, bad CSV,
/// wrong-sized vector, invalid option. The message names the file and key or line. Exit 2.
class InputError : public Error {
 public:
  explicit InputError(const std::string& what) : Error(what) {}
};

/// Numerical failure: integrator failure, non-finite values, a singular matrix that must be
/// inverted. The message says what failed and at which t. Exit 3.
class NumericalError : public Error {
 public:
  explicit NumericalError(const std::string& what) : Error(what) {}
};

/// Exit status of the apps.
enum ExitCode : int { kExitOk = 0, kExitInput = 2, kExitNumerical = 3 };

/// Formats a double with full precision (17 significant digits) for messages.
std::string format_number(double x);

/// TEXT in single quotes for a message, cut to about MAX characters ("'abc...' (104857600
/// characters)") so that a huge field or expression never floods the error line.
std::string quote_clipped(const std::string& text, std::size_t max = 80);

}  // namespace ordex
