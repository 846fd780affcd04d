// SPDX-License-Identifier: Apache-2.0
// Exact line integrals of ellipses and Gaussian blobs, with the global phase.
#include "recofold/phantom/line_integral.h"

#include <cmath>

#include "recofold/core/error.h"
#include "phantom_geometry.h"

namespace recofold {

namespace {
constexpr double kPi = 3.14159265358979323846;

// sin(x)/x, with its series near 0.
inline double sinc(double x) {
  if (std::abs(x) < 1e-4) return 1.0 - x * x / 6.0;
  return std::sin(x) / x;
}

// Integral along { t n + s d } with n = (nx, ny), d = (-ny, nx) a unit vector,
// of sum_c rho_c f_c(x) exp(i beta s); beta = 2 pi g.d (0 without a phase).
// Returns (re, im).
void ray_sum(const std::vector<internal::ComponentFrame>& frames, double nx, double ny, double t,
             double beta, double* re, double* im) {
  const double dx = -ny, dy = nx;
  double sr = 0.0, si = 0.0;
  for (const internal::ComponentFrame& f : frames) {
    // Foot point relative to the centre and the direction, in the component frame.
    const double px = t * nx - f.x0, py = t * ny - f.y0;
    const double ppx = f.cos_phi * px + f.sin_phi * py;
    const double ppy = -f.sin_phi * px + f.cos_phi * py;
    const double dpx = f.cos_phi * dx + f.sin_phi * dy;
    const double dpy = -f.sin_phi * dx + f.cos_phi * dy;
    // Scaled coordinates: the shape is |u + s v| <= 1 (ellipse) or
    // exp(-|u + s v|^2 / 2) (blob).
    const double ux = ppx / f.a, uy = ppy / f.b;
    const double vx = dpx / f.a, vy = dpy / f.b;
    const double A = vx * vx + vy * vy;
    const double B = ux * vx + uy * vy;
    const double C = ux * ux + uy * uy;
    double vr = 0.0, vi = 0.0;  // integral of f_c exp(i beta s) / rho_c
    if (f.kind == ComponentKind::kEllipse) {
      const double disc = B * B - A * (C - 1.0);
      if (disc <= 0.0) continue;
      const double half = std::sqrt(disc) / A;  // half chord
      if (beta == 0.0) {
        vr = 2.0 * half;
      } else {
        const double mid = -B / A;
        const double mag = 2.0 * half * sinc(beta * half);
        vr = mag * std::cos(beta * mid);
        vi = mag * std::sin(beta * mid);
      }
    } else {
      // integral of exp(-(A s^2 + 2 B s + C)/2 + i beta s) ds
      //   = sqrt(2 pi / A) exp(((i beta - B)^2)/(2 A) - C/2)
      const double mag = std::sqrt(2.0 * kPi / A) * std::exp((B * B - beta * beta) / (2.0 * A) - 0.5 * C);
      if (beta == 0.0) {
        vr = mag;
      } else {
        const double ph = -beta * B / A;
        vr = mag * std::cos(ph);
        vi = mag * std::sin(ph);
      }
    }
    sr += f.rho_re * vr - f.rho_im * vi;
    si += f.rho_re * vi + f.rho_im * vr;
  }
  *re = sr;
  *im = si;
}

// The whole phantom along the line with unit normal (nx, ny) at offset t.
cdouble ray_value(const Phantom& p, const std::vector<internal::ComponentFrame>& frames, double nx,
                  double ny, double t) {
  const bool phased = p.phase_gx != 0.0 || p.phase_gy != 0.0;
  const double beta = phased ? 2.0 * kPi * (p.phase_gx * -ny + p.phase_gy * nx) : 0.0;
  double re, im;
  ray_sum(frames, nx, ny, t, beta, &re, &im);
  if (!phased && p.phase0_rad == 0.0) return {re, im};
  // exp(i (phase0 + 2 pi g.(t n))) multiplies the whole ray.
  const double arg = p.phase0_rad + 2.0 * kPi * t * (p.phase_gx * nx + p.phase_gy * ny);
  return cdouble(re, im) * std::polar(1.0, arg);
}

// Unit normal and offset of the line through two points: d = (p2 - p1)/|p2 - p1|,
// n = (d_y, -d_x) so that d = (-n_y, n_x), t = p1.n.
void line_params(const LineThrough& r, double* nx, double* ny, double* t) {
  const double ex = r.x2 - r.x1, ey = r.y2 - r.y1;
  const double len = std::hypot(ex, ey);
  RECOFOLD_CHECK(len > 0.0) << "line through two coincident points (" << r.x1 << ", " << r.y1 << ")";
  const double dx = ex / len, dy = ey / len;
  *nx = dy;
  *ny = -dx;
  *t = r.x1 * *nx + r.y1 * *ny;
}
}  // namespace

cdouble line_integral(const Phantom& p, double theta_rad, double t) {
  return ray_value(p, internal::make_frames(p), std::cos(theta_rad), std::sin(theta_rad), t);
}

cdouble line_integral_through(const Phantom& p, double x1, double y1, double x2, double y2) {
  double nx, ny, t;
  line_params(LineThrough{x1, y1, x2, y2}, &nx, &ny, &t);
  return ray_value(p, internal::make_frames(p), nx, ny, t);
}

Eigen::VectorXcd line_integrals(const Phantom& p, const VecD& theta_rad, const VecD& t) {
  RECOFOLD_CHECK(theta_rad.size() == t.size()) << "theta has " << theta_rad.size() << " rays, t " << t.size();
  const std::vector<internal::ComponentFrame> frames = internal::make_frames(p);
  Eigen::VectorXcd out(t.size());
#pragma omp parallel for schedule(static)
  for (Index i = 0; i < t.size(); ++i)
    out[i] = ray_value(p, frames, std::cos(theta_rad[i]), std::sin(theta_rad[i]), t[i]);
  return out;
}

Eigen::VectorXcd line_integrals_through(const Phantom& p, const std::vector<LineThrough>& rays) {
  const std::vector<internal::ComponentFrame> frames = internal::make_frames(p);
  const Index n = static_cast<Index>(rays.size());
  for (const LineThrough& r : rays)
    RECOFOLD_CHECK(r.x1 != r.x2 || r.y1 != r.y2) << "line through two coincident points";
  Eigen::VectorXcd out(n);
#pragma omp parallel for schedule(static)
  for (Index i = 0; i < n; ++i) {
    double nx, ny, t;
    line_params(rays[static_cast<size_t>(i)], &nx, &ny, &t);
    out[i] = ray_value(p, frames, nx, ny, t);
  }
  return out;
}

ImageD parallel_sinogram(const Phantom& p, const std::vector<double>& angles_rad,
                         const std::vector<double>& offsets) {
  const std::vector<internal::ComponentFrame> frames = internal::make_frames(p);
  const Index views = static_cast<Index>(angles_rad.size());
  const Index dets = static_cast<Index>(offsets.size());
  ImageD out(views, dets);
#pragma omp parallel for schedule(static)
  for (Index i = 0; i < views; ++i) {
    const double nx = std::cos(angles_rad[static_cast<size_t>(i)]);
    const double ny = std::sin(angles_rad[static_cast<size_t>(i)]);
    for (Index j = 0; j < dets; ++j) out(i, j) = ray_value(p, frames, nx, ny, offsets[static_cast<size_t>(j)]).real();
  }
  return out;
}

}  // namespace recofold
