#pragma once
// Output grids over a window, shared by the jobs, the apps and the tests.
#include <vector>

namespace ordex {

/// Equally spaced times from a to b, both ends included (n >= 2; n == 1 gives {b}). The last
/// entry is b exactly, so a grid always ends on the window's end.
std::vector<double> linspace(double a, double b, int n);

}  // namespace ordex
