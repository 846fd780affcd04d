// SPDX-License-Identifier: Apache-2.0
// Box constraint: projection, violation, support function.
#include "recofold/priors/box.h"

#include <algorithm>
#include <cmath>
#include <sstream>

namespace recofold {

bool Box::is_bounded() const { return std::isfinite(lower) && std::isfinite(upper); }

void Box::project(const VecC& v, VecC& out) const {
  out.resize(v.size());
  const float lo = static_cast<float>(lower), hi = static_cast<float>(upper);
  for (Index i = 0; i < v.size(); ++i) {
    const float re = std::min(std::max(v[i].real(), lo), hi);
    out[i] = cfloat(re, real ? 0.f : v[i].imag());
  }
}

double Box::violation(const VecC& x) const {
  // Bounds rounded to float like project() does, so projected images have violation 0.
  const double lo = static_cast<float>(lower), hi = static_cast<float>(upper);
  double worst = 0.0;
  for (Index i = 0; i < x.size(); ++i) {
    const double re = x[i].real();
    worst = std::max(worst, std::max(lo - re, re - hi));
    if (real) worst = std::max(worst, double(std::abs(x[i].imag())));
  }
  return worst;
}

double Box::support(const VecC& s, double radius) const {
  const double lo = std::isfinite(lower) ? lower : -radius;
  const double hi = std::isfinite(upper) ? upper : radius;
  double sum = 0.0;
  for (Index i = 0; i < s.size(); ++i) {
    const double re = s[i].real();
    sum += std::max(lo * re, hi * re);
    // Free imaginary parts are restricted to [-radius, radius] too.
    if (!real) sum += radius * std::abs(double(s[i].imag()));
  }
  return sum;
}

std::string Box::to_string() const {
  std::ostringstream s;
  s << "[" << lower << ", " << upper << "]" << (real ? " real" : "");
  return s.str();
}

std::vector<std::string> Box::validate() const {
  std::vector<std::string> errors;
  if (std::isnan(lower) || std::isnan(upper) || !(lower <= upper))
    errors.push_back("box.lower = " + std::to_string(lower) + ", box.upper = " + std::to_string(upper) +
                     "; need lower <= upper");
  return errors;
}

}  // namespace recofold
