// SPDX-License-Identifier: Apache-2.0
// Point values of an analytic phantom and certified bounds of its minimum and maximum.
//
// The object is f(x, y) = sum_k rho_k s_k(x, y) over its components (phantom.h),
// s_k = 1 inside an ellipse (x'^2/a^2 + y'^2/b^2 <= 1, boundary included) and
// 0 outside, s_k = exp(-x'^2/2a^2 - y'^2/2b^2) for a blob. The global phase
// of a phantom has modulus 1 and is left out: bounds are those of the
// magnitude-defining real object. Only real intensities are accepted.
//
// value_bounds() encloses inf f and sup f over the box [-extent, extent]^2
// without rastering, by branch and bound on square cells:
//   - an ellipse over the disc D(p, R) circumscribing a cell is certainly 1
//     when sqrt(q(p)) <= 1 - R/b_min and certainly 0 when
//     sqrt(q(p)) >= 1 + R/b_min (q(p) = x'^2/a^2 + y'^2/b^2, b_min the smaller
//     semi-axis), because the ellipse scaled by s about its centre satisfies
//     sE + D(0, R) inside E for s = 1 - R/b_min and E + D(0, R) inside
//     (1 + R/b_min)E (support functions: h_E >= b_min); otherwise it spans
//     [min(0, rho), max(0, rho)];
//   - a blob over the disc: u = sqrt(q) changes by at most R/sigma_min, so
//     s lies in [exp(-(u + R/sigma_min)^2/2), exp(-max(0, u - R/sigma_min)^2/2)];
//     blobs whose upper value falls below 2e-16 of their peak are folded
//     into a remainder interval carried by the cell.
// Cells are refined best-first (largest upper bound for the maximum, smallest
// lower bound for the minimum); the value at each refined cell's centre is a
// value the object takes (up to the remainder), so every result is an
// interval: inf f in [min_lower, min_attained], sup f in [max_attained,
// max_upper]. Rounding of the double arithmetic (about 1e-15 relative) is the
// only slack.
#pragma once

#include <limits>

#include "recofold/phantom/phantom.h"

namespace recofold {

// The real object at (x, y), units of the [-1,1] square (global phase left out).
double phantom_value(const Phantom& p, double x, double y);

struct ValueBoundsOptions {
  // Half-width of the square box searched, units of the [-1,1] square
  // (> 0; 1 = the field of view).
  double extent = 1.0;
  // The search for the maximum stops as soon as it is certified
  // (max_upper <= upper_limit) or refuted (max_attained > upper_limit); the
  // same for the minimum against lower_limit. Infinite: no early stop.
  double upper_limit = std::numeric_limits<double>::infinity();
  double lower_limit = -std::numeric_limits<double>::infinity();
  // Otherwise it stops when its interval is narrower than this (> 0).
  double tolerance = 1e-3;
  // Cells refined per extreme (> 0); when reached, the result is still a
  // valid enclosure but `resolved` is false.
  long max_cells = 200000;
  // Either search may be left out (its fields of ValueBounds are then 0 and
  // not resolved).
  bool find_min = true, find_max = true;
};

struct ValueBounds {
  double min_lower = 0.0, min_attained = 0.0;  // inf f lies in [min_lower, min_attained]
  double max_attained = 0.0, max_upper = 0.0;  // sup f lies in [max_attained, max_upper]
  double min_x = 0.0, min_y = 0.0;             // where min_attained was found
  double max_x = 0.0, max_y = 0.0;             // where max_attained was found
  bool min_resolved = false, max_resolved = false;  // stopped by tolerance or limit, not by the budget
  long cells = 0;                              // cells refined (both searches)

  // The certificates the limits ask for.
  bool certified_at_least(double lower) const { return min_lower >= lower; }
  bool certified_at_most(double upper) const { return max_upper <= upper; }
};

// Certified enclosure of the extremes (header comment). The phantom must be
// valid with real intensities and the options valid (checked: a bug otherwise).
ValueBounds value_bounds(const Phantom& p, const ValueBoundsOptions& options = {});

}  // namespace recofold
