// SPDX-License-Identifier: Apache-2.0
// Exact line integrals of analytic phantoms (parallel-beam and fan-beam rays).
//
// Geometry, in units of the [-1,1] square (x right, y up):
//   a parallel-beam ray (theta, t) is the line { t n + s d : s real } with
//     n = (cos theta, sin theta)    the detector (t) axis,
//     d = (-sin theta, cos theta)   the direction of integration,
//   so at theta = 0 the rays are vertical (integrate over y, t = x) and at
//   theta = pi/2 horizontal (integrate over x, t = y, d pointing to -x).
//   A fan-beam ray is the whole line through a source point and a detector
//   point (the integral runs over the full line, not only the segment).
// Values are in intensity x unit length; multiply by Phantom::mm_per_unit()
// for intensity x mm (e.g. attenuation per mm -> dimensionless).
//
// Closed forms (per component, in its own frame, from memory; DEVELOPERS.md "Sources"
// quotes the Kak & Slaney version for the ellipse; tests check against
// brute-force numerical integration):
//   ellipse: rho x chord length; blob: rho sqrt(2 pi / A) exp(B^2/(2A) - C/2)
//   for the ray written as exp(-(A s^2 + 2 B s + C)/2).
// A global phase exp(i (phase0 + 2 pi g.x)) is integrated exactly along the
// ray as well, so complex phantoms give exact complex line integrals.
#pragma once

#include <vector>

#include "recofold/core/types.h"
#include "recofold/phantom/phantom.h"

namespace recofold {

// Integral of the phantom along the parallel-beam ray (theta_rad, t).
cdouble line_integral(const Phantom& p, double theta_rad, double t);

// Integral along the line through (x1, y1) and (x2, y2), which must differ (checked).
cdouble line_integral_through(const Phantom& p, double x1, double y1, double x2, double y2);

// Many parallel-beam rays (theta_rad[i], t[i]); equal lengths (checked).
// Parallel over rays with OpenMP.
Eigen::VectorXcd line_integrals(const Phantom& p, const VecD& theta_rad, const VecD& t);

// A line through two points, e.g. a fan-beam source and a detector element.
struct LineThrough {
  double x1 = 0.0, y1 = 0.0;  // first point (the source)
  double x2 = 0.0, y2 = 0.0;  // second point (the detector element), distinct from the first
};

// Many lines through point pairs; parallel over rays with OpenMP.
Eigen::VectorXcd line_integrals_through(const Phantom& p, const std::vector<LineThrough>& rays);

// Parallel-beam sinogram [views, detectors]: element (i, j) is the real part of
// line_integral(p, angles_rad[i], offsets[j]) (CT objects are real; for a
// complex phantom the imaginary part is dropped). Parallel over views.
ImageD parallel_sinogram(const Phantom& p, const std::vector<double>& angles_rad,
                         const std::vector<double>& offsets);

}  // namespace recofold
