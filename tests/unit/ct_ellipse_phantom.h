// SPDX-License-Identifier: Apache-2.0
// Test helper for the CT tests: ellipse phantoms with closed-form line integrals and a supersampled raster.
//
// Independent of the phantom module on purpose, so the projector's check does
// not rest on the code under test elsewhere. Formula (Kak & Slaney,
// "Principles of Computerized Tomographic Imaging", 1988, ch. 3, from memory):
// a uniform ellipse of intensity rho and semi-axes a, b centred at the origin
// has p_theta(t) = 2 rho a b / alpha^2 sqrt(alpha^2 - t^2) for |t| <= alpha,
// alpha^2 = a^2 cos^2 theta + b^2 sin^2 theta; a centre (x0, y0) shifts t by
// x0 cos theta + y0 sin theta and a rotation phi shifts theta by -phi. The
// rasteriser is a brute-force check of the same formula's geometry.
#pragma once

#include <cmath>
#include <vector>

#include "recofold/core/types.h"

namespace recofold::testing {

struct TestEllipse {
  double rho, a, b, x0, y0, phi_deg;  // on the [-1,1] square, y up
};

// Modified Shepp-Logan (Toft's intensities) in the DEVELOPERS.md "Sources" geometry.
inline std::vector<TestEllipse> modified_shepp_logan() {
  return {{1.0, .69, .92, 0, 0, 0},       {-.8, .6624, .874, 0, -.0184, 0}, {-.2, .11, .31, .22, 0, -18},
          {-.2, .16, .41, -.22, 0, 18},   {.1, .21, .25, 0, .35, 0},        {.1, .046, .046, 0, .1, 0},
          {.1, .046, .046, 0, -.1, 0},    {.1, .046, .023, -.08, -.605, 0}, {.1, .023, .023, 0, -.606, 0},
          {.1, .023, .046, .06, -.605, 0}};
}

// Line integral over the line {p : p . (cos th, sin th) = t}, coordinates in
// units of the [-1,1] square; multiply by the half-width in mm for mm units.
inline double ellipse_line_integral(const std::vector<TestEllipse>& es, double th, double t) {
  double sum = 0.0;
  for (const auto& e : es) {
    const double phi = e.phi_deg * M_PI / 180.0;
    const double tt = t - (e.x0 * std::cos(th) + e.y0 * std::sin(th));
    const double thr = th - phi;
    const double al2 = e.a * e.a * std::cos(thr) * std::cos(thr) + e.b * e.b * std::sin(thr) * std::sin(thr);
    if (tt * tt < al2) sum += 2.0 * e.rho * e.a * e.b / al2 * std::sqrt(al2 - tt * tt);
  }
  return sum;
}

// Line integral along the line through (ax, ay) and (bx, by).
inline double ellipse_line_integral_points(
    const std::vector<TestEllipse>& es, double ax, double ay, double bx, double by) {
  const double wx = bx - ax, wy = by - ay, len = std::hypot(wx, wy);
  const double ex = wy / len, ey = -wx / len;  // unit normal
  return ellipse_line_integral(es, std::atan2(ey, ex), ax * ex + ay * ey);
}

// Row-major ny x nx raster (row 0 at the top) averaged over s x s sub-samples per pixel.
inline ImageF rasterise(const std::vector<TestEllipse>& es, Index ny, Index nx, int s) {
  ImageF img = ImageF::Zero(ny, nx);
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      double acc = 0.0;
      for (int sy = 0; sy < s; ++sy)
        for (int sx = 0; sx < s; ++sx) {
          const double x = -1.0 + (2.0 * ix + (2.0 * sx + 1.0) / s) / nx;
          const double y = 1.0 - (2.0 * iy + (2.0 * sy + 1.0) / s) / ny;
          for (const auto& e : es) {
            const double phi = e.phi_deg * M_PI / 180.0;
            const double dx = x - e.x0, dy = y - e.y0;
            const double u = std::cos(phi) * dx + std::sin(phi) * dy;
            const double v = -std::sin(phi) * dx + std::cos(phi) * dy;
            if ((u * u) / (e.a * e.a) + (v * v) / (e.b * e.b) <= 1.0) acc += e.rho;
          }
        }
      img(iy, ix) = static_cast<float>(acc / (s * s));
    }
  return img;
}

}  // namespace recofold::testing
