// SPDX-License-Identifier: Apache-2.0
// Complex soft thresholding.
#include "recofold/priors/shrinkage.h"

#include <cmath>

namespace recofold {

cfloat soft_threshold(cfloat z, double t) {
  const double m = std::abs(std::complex<double>(z.real(), z.imag()));
  if (m <= t) return cfloat(0.f, 0.f);
  const double s = 1.0 - t / m;
  return cfloat(static_cast<float>(z.real() * s), static_cast<float>(z.imag() * s));
}

void group_soft_threshold(cfloat& a, cfloat& b, double t) {
  const double n = std::sqrt(double(std::norm(a)) + double(std::norm(b)));
  if (n <= t) {
    a = b = cfloat(0.f, 0.f);
    return;
  }
  const float s = static_cast<float>(1.0 - t / n);
  a *= s;
  b *= s;
}

}  // namespace recofold
