// SPDX-License-Identifier: Apache-2.0
// 2-D CT acquisition geometry (parallel and fan beam) and the rays it defines.
//
// Coordinates are in mm with the origin at the centre of the image grid, x to
// the right and y up (the phantom convention of phantom.h scaled by
// fov_mm / 2). Image pixel (iy, ix) of an ny x nx grid with square pixels of
// side `pixel_size_mm` has its centre at
//   x = (ix - (nx - 1) / 2) * pixel_size_mm,  y = ((ny - 1) / 2 - iy) * pixel_size_mm.
//
// Parallel beam (Kak & Slaney, 1988, ch. 3 convention): view angle theta, ray
// direction d = (-sin theta, cos theta), detector axis e = (cos theta, sin theta).
// Detector j measures the line integral over the line {p : p . e = t_j} with
//   t_j = (j - (n - 1) / 2) * detector_spacing_mm + detector_offset_mm.
// This is the geometry of scikit-image's radon/iradon for an odd image size
// (theta = 0 integrates along y, so t = x; see tests/reference/ops_radon_skimage.py).
//
// Fan beam: view angle beta, source S = -R d (R = source_to_isocenter_mm), the
// detector centre at S + D d (D = source_to_detector_mm), so the central ray of
// view beta is the parallel ray (theta = beta, t = 0). With
//   u_j = (j - (n - 1) / 2) * detector_spacing_mm + detector_offset_mm,
//   flat detector:         detector point P_j = S + D d + u_j e,  gamma_j = atan(u_j / D)
//   equiangular detector:  gamma_j = u_j / D (u_j is arc length at radius D),
//                          P_j = S + D (cos gamma_j d + sin gamma_j e)
// and ray j goes from S to P_j. It is the parallel ray
//   theta = beta - gamma_j,  t = R sin gamma_j.
// A fan-beam FBP needs views over a full turn (360 degrees).
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/measurement.h"
#include "recofold/core/types.h"

namespace recofold {

// CtBeam and FanDetector (and their names) are part of the measurement record
// (core/measurement.h).

// One ray as a line through two points (mm): for fan beams `a` is the source
// and `b` the detector element; for parallel beams `a` and `b` lie on the line
// on either side of the image.
struct CtRay {
  double ax = 0, ay = 0, bx = 0, by = 0;
};

// The acquisition geometry and the image grid it sees. Sinogram layout:
// [views, detectors], row-major, in units of (image intensity) x mm times the
// attenuation scale of the operator.
struct CtGeometry {
  CtBeam beam = CtBeam::kParallel;
  FanDetector fan_detector = FanDetector::kEquiangular;  // fan only
  std::vector<double> angles_rad;                        // view angles theta (parallel) or beta (fan), any order
  Index detector_count = 0;                              // elements per view, >= 1
  double detector_spacing_mm = 1.0;                      // parallel: spacing of t; fan: spacing on the detector
                                                         // (flat: mm along it; equiangular: arc length at radius D)
  double detector_offset_mm = 0.0;                       // shift of the detector centre along its axis
  double source_to_isocenter_mm = 0;                     // fan only: R, must exceed the image's half-diagonal
  double source_to_detector_mm = 0;                      // fan only: D, must exceed R
  Index ny = 0, nx = 0;                                  // image grid
  double pixel_size_mm = 1.0;                            // square pixels

  // Every violation, one message each, naming the field, its value and the
  // rule (zero views, no detectors, non-finite angles, fan source inside the
  // circle enclosing the image, detector closer than the isocentre, ...).
  std::vector<std::string> validate() const;

  Index view_count() const { return static_cast<Index>(angles_rad.size()); }
  // u_j (fan) or t_j (parallel) of detector element j, mm.
  double detector_coordinate(Index j) const;
  // Fan only: the angle of ray j from the central ray, radians.
  double fan_angle(Index j) const;
  // The ray of (view, detector); for parallel beams the points lie
  // `half_length_mm` from the line's foot point (default: beyond the image).
  CtRay ray(Index view, Index detector) const;
  // Radius (mm) of the centred circle every view's detector covers: pixels
  // inside it are seen by all views (the FBP reconstruction circle).
  double covered_radius_mm() const;
  // Half-diagonal of the image grid, mm (the circle enclosing the object).
  double image_half_diagonal_mm() const;
  // "parallel 180 views x 363 detectors" / "fan (equiangular) 360 views x 363 detectors".
  std::string describe() const;
};

// Geometry of a CT measurement (CtData plus the measurement's grid and pixel
// size). Throws InputError naming `file` and the field when the record is
// inconsistent (e.g. sinogram shape differs from angles x detectors) or the
// geometry is invalid.
CtGeometry ct_geometry_from(const Measurement& m, const std::string& file = "");

// Copies the geometry fields into a CtData record (angles, detector layout,
// beam and detector names); leaves sinogram and noise fields alone.
void store_geometry(const CtGeometry& g, CtData& ct);

}  // namespace recofold
