// SPDX-License-Identifier: Apache-2.0
// Private: pieces shared by the family generators (family.cc, anatomy.cc).
#pragma once

#include <cmath>

#include "recofold/core/rng.h"
#include "recofold/phantom/family.h"
#include "region_tree.h"

namespace recofold::internal {

// Gap between nested or neighbouring regions, units of the square.
constexpr double kRegionGap = 0.008;

// Region values are multiples of 2^-20, so sums and differences of them are
// exact in double precision (an object whose region value is 0 is exactly 0
// there, not -1e-17).
inline double quantise_value(double v) { return std::floor(v * 1048576.0 + 0.5) / 1048576.0; }

// A point uniformly inside the axis-aligned ellipse (x0, y0, a - margin,
// b - margin); rejection with arithmetic only.
void point_inside(Rng& rng, double x0, double y0, double a, double b, double margin, double* x, double* y);

// A point uniformly inside (the frame of) a region ellipse shrunk by `margin`
// on both semi-axes (rotation applied).
void point_inside_region(Rng& rng, const Component& e, double margin, double* x, double* y);

// Positive texture blob: sigma U(lo, hi) (round or anisotropic with a random
// rotation), peak amplitude `amplitude` x U(0.3, 1), centre (x, y).
Component texture_blob(Rng& rng, double sigma_lo, double sigma_hi, bool round, double amplitude, double x, double y);

// True when the maximum of `p` over the field of view is certified to be at
// most `bound` (value_bounds; a tiny margin covers rounding).
bool certified_below(const Phantom& p, double bound);

// The anatomy family's object (family.h), drawn from `rng`.
Phantom make_anatomy_object(const FamilyOptions& o, Rng& rng);

}  // namespace recofold::internal
