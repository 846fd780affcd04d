// SPDX-License-Identifier: Apache-2.0
// Exact k-space at arbitrary points: shifted closed-form transforms combined by the coil series.
#include "recofold/acquire/exact_kspace.h"

#include <algorithm>
#include <cmath>

#include "recofold/core/error.h"
#include "recofold/phantom/fourier.h"

namespace recofold {

NdArray<cfloat> exact_kspace_at_points(const Phantom& p, Index ny, Index nx, const VecD& kx, const VecD& ky,
                                       const CoilFourierSeries* coils) {
  RECOFOLD_CHECK(ny >= 1 && nx >= 1 && kx.size() == ky.size()) << ny << "x" << nx << ", " << kx.size() << " points";
  constexpr double kPi = 3.14159265358979323846;
  CoilFourierSeries one;
  one.gx = {0.0};
  one.gy = {0.0};
  one.coeff = {cdouble(1.0, 0.0)};
  const CoilFourierSeries& s = coils ? *coils : one;
  const Index m = kx.size(), t_count = s.terms(), c_count = s.coils;
  VecD gx(t_count), gy(t_count);
  for (Index t = 0; t < t_count; ++t) {
    gx[t] = s.gx[static_cast<size_t>(t)];
    gy[t] = s.gy[static_cast<size_t>(t)];
  }
  Eigen::MatrixXcd a(c_count, t_count);
  for (Index c = 0; c < c_count; ++c)
    for (Index t = 0; t < t_count; ++t) a(c, t) = s.coeff[static_cast<size_t>(c * t_count + t)];
  const double cx = (nx % 2 == 0) ? 0.5 : 0.0, cy = (ny % 2 == 0) ? 0.5 : 0.0;
  const double scale = std::sqrt(static_cast<double>(ny) * static_cast<double>(nx)) / 4.0;
  NdArray<cfloat> out(Shape{c_count, m});
  constexpr Index kBlock = 8192;  // points per block: bounds the [T, block] table
  for (Index j0 = 0; j0 < m; j0 += kBlock) {
    const Index b = std::min(kBlock, m - j0);
    const VecD bx = 0.5 * kx.segment(j0, b), by = 0.5 * ky.segment(j0, b);
    const Eigen::MatrixXcd y = a * shifted_fourier_transforms(p, bx, by, gx, gy);  // [C, b]
    for (Index j = 0; j < b; ++j) {
      const Index jj = j0 + j;
      const cdouble phase = std::polar(
          scale, 2.0 * kPi * (cx * kx[jj] / static_cast<double>(nx) - cy * ky[jj] / static_cast<double>(ny)));
      for (Index c = 0; c < c_count; ++c) {
        const cdouble v = y(c, j) * phase;
        out.data[static_cast<size_t>(c * m + jj)] = cfloat(static_cast<float>(v.real()), static_cast<float>(v.imag()));
      }
    }
  }
  return out;
}

}  // namespace recofold
