// SPDX-License-Identifier: Apache-2.0
// Box (bound) constraints on image values and their projection.
#pragma once

#include <limits>
#include <string>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

// The convex set C = { x : lower <= Re x_i <= upper, and Im x_i = 0 when `real` }.
// Non-negativity for CT attenuation is Box{0.0}. With real == false only the
// real parts are bounded and imaginary parts are free.
struct Box {
  double lower = 0.0;                                       // may be -infinity
  double upper = std::numeric_limits<double>::infinity();  // may be +infinity; >= lower
  bool real = true;                                         // project imaginary parts to 0

  bool is_bounded() const;  // both bounds finite
  // Euclidean projection onto C (exact): clip real parts, zero imaginary parts when `real`.
  void project(const VecC& v, VecC& out) const;
  // Largest violation of C by x (0 when x is in C).
  double violation(const VecC& x) const;
  // Support function sup_{u in C} Re<s, u> = sum_i max(lower Re s_i, upper Re s_i)
  // (+ radius |Im s_i| when !real). Infinite bounds and free imaginary parts
  // are restricted to [-radius, radius] (the bounded set of a partial duality gap).
  double support(const VecC& s, double radius) const;
  // "[0, inf) real"
  std::string to_string() const;
  std::vector<std::string> validate() const;  // "box.lower = ...; must be <= box.upper"
};

}  // namespace recofold
