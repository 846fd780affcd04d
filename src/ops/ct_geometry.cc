// SPDX-License-Identifier: Apache-2.0
// CT geometry: validation, detector coordinates, rays, and conversion from/to CtData.
#include "recofold/ops/ct_geometry.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/core/measurement.h"

namespace recofold {

double CtGeometry::image_half_diagonal_mm() const {
  return 0.5 * pixel_size_mm * std::sqrt(double(nx) * double(nx) + double(ny) * double(ny));
}

std::vector<std::string> CtGeometry::validate() const {
  std::vector<std::string> errors;
  if (angles_rad.empty()) errors.push_back("angles: 0 views; need at least 1");
  for (size_t i = 0; i < angles_rad.size(); ++i) {
    if (!std::isfinite(angles_rad[i])) {
      errors.push_back("angles[" + std::to_string(i) + "] is not finite");
      break;
    }
  }
  if (detector_count < 1) errors.push_back("detector_count = " + std::to_string(detector_count) + "; must be >= 1");
  if (!(detector_spacing_mm > 0.0) || !std::isfinite(detector_spacing_mm))
    errors.push_back("detector_spacing_mm = " + format_sig(detector_spacing_mm, 10) + "; must be > 0");
  if (!std::isfinite(detector_offset_mm))
    errors.push_back("detector_offset_mm = " + format_sig(detector_offset_mm, 10) + "; must be finite");
  if (ny < 1 || nx < 1)
    errors.push_back("image grid = " + std::to_string(ny) + "x" + std::to_string(nx) + "; both sizes must be >= 1");
  if (!(pixel_size_mm > 0.0) || !std::isfinite(pixel_size_mm))
    errors.push_back("pixel_size_mm = " + format_sig(pixel_size_mm, 10) + "; must be > 0");
  if (beam == CtBeam::kFan) {
    const double r_obj = image_half_diagonal_mm();
    if (!(source_to_isocenter_mm > r_obj) || !std::isfinite(source_to_isocenter_mm))
      errors.push_back("source_to_isocenter_mm = " + format_sig(source_to_isocenter_mm, 10) +
                       "; the source must lie outside the circle enclosing the image (radius " + format_sig(r_obj, 10) + " mm)");
    if (!(source_to_detector_mm > source_to_isocenter_mm) || !std::isfinite(source_to_detector_mm))
      errors.push_back("source_to_detector_mm = " + format_sig(source_to_detector_mm, 10) +
                       "; must exceed source_to_isocenter_mm = " + format_sig(source_to_isocenter_mm, 10));
    // The fan angle is only meaningful once the distances are valid.
    const bool distances_ok = source_to_isocenter_mm > r_obj && source_to_detector_mm > source_to_isocenter_mm &&
                              std::isfinite(source_to_detector_mm);
    if (fan_detector == FanDetector::kEquiangular && distances_ok && detector_count >= 1 && detector_spacing_mm > 0) {
      const double g = std::max(std::abs(detector_coordinate(0)), std::abs(detector_coordinate(detector_count - 1))) /
                       source_to_detector_mm;
      if (!(g < 0.5 * M_PI))
        errors.push_back("equiangular detector spans a fan half-angle of " + format_sig(g * 180.0 / M_PI, 10) +
                         " degrees; must be < 90");
    }
  }
  return errors;
}

double CtGeometry::detector_coordinate(Index j) const {
  return (double(j) - 0.5 * double(detector_count - 1)) * detector_spacing_mm + detector_offset_mm;
}

double CtGeometry::fan_angle(Index j) const {
  const double u = detector_coordinate(j);
  return fan_detector == FanDetector::kFlat ? std::atan(u / source_to_detector_mm) : u / source_to_detector_mm;
}

CtRay CtGeometry::ray(Index view, Index detector) const {
  const double th = angles_rad.at(static_cast<size_t>(view));
  const double c = std::cos(th), s = std::sin(th);
  const double dx = -s, dy = c;  // ray direction d
  const double ex = c, ey = s;   // detector axis e
  CtRay r;
  if (beam == CtBeam::kParallel) {
    const double t = detector_coordinate(detector);
    const double half = image_half_diagonal_mm() + 2.0 * pixel_size_mm;
    r.ax = t * ex - half * dx;
    r.ay = t * ey - half * dy;
    r.bx = t * ex + half * dx;
    r.by = t * ey + half * dy;
    return r;
  }
  const double R = source_to_isocenter_mm, D = source_to_detector_mm;
  r.ax = -R * dx;
  r.ay = -R * dy;
  if (fan_detector == FanDetector::kFlat) {
    const double u = detector_coordinate(detector);
    r.bx = r.ax + D * dx + u * ex;
    r.by = r.ay + D * dy + u * ey;
  } else {
    const double g = fan_angle(detector);
    r.bx = r.ax + D * (std::cos(g) * dx + std::sin(g) * ex);
    r.by = r.ay + D * (std::cos(g) * dy + std::sin(g) * ey);
  }
  return r;
}

double CtGeometry::covered_radius_mm() const {
  if (detector_count < 1) return 0.0;
  if (beam == CtBeam::kParallel) {
    return std::max(0.0, std::min(-detector_coordinate(0), detector_coordinate(detector_count - 1)));
  }
  const double g = std::min(-fan_angle(0), fan_angle(detector_count - 1));
  if (g <= 0.0) return 0.0;
  return source_to_isocenter_mm * std::sin(std::min(g, 0.5 * M_PI));
}

std::string CtGeometry::describe() const {
  std::ostringstream s;
  s << to_string(beam);
  if (beam == CtBeam::kFan) s << " (" << to_string(fan_detector) << ")";
  s << " " << angles_rad.size() << " views x " << detector_count << " detectors";
  return s.str();
}

CtGeometry ct_geometry_from(const Measurement& m, const std::string& file) {
  if (!m.ct) throw InputError(file, "/ct", "the measurement has no CT data");
  const CtData& ct = *m.ct;
  CtGeometry g;
  g.beam = ct.beam;
  if (g.beam == CtBeam::kFan) g.fan_detector = ct.detector_shape;
  g.angles_rad = ct.angles_rad;
  g.detector_count = ct.detector_count;
  g.detector_spacing_mm = ct.detector_spacing_mm;
  g.detector_offset_mm = ct.detector_offset_mm;
  g.source_to_isocenter_mm = ct.source_to_isocenter_mm;
  g.source_to_detector_mm = ct.source_to_detector_mm;
  g.ny = m.ny;
  g.nx = m.nx;
  g.pixel_size_mm = m.pixel_spacing_mm[1];
  if (std::abs(m.pixel_spacing_mm[0] - m.pixel_spacing_mm[1]) > 1e-6 * std::abs(m.pixel_spacing_mm[1]))
    throw InputError(
        file, "pixel_spacing_mm",
        "CT needs square pixels; got (" + format_sig(m.pixel_spacing_mm[0], 10) + ", " + format_sig(m.pixel_spacing_mm[1], 10) + ")");
  const auto errors = g.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
    throw InputError(file, "/ct", all);
  }
  const Shape expected{g.view_count(), g.detector_count};
  if (ct.sinogram.shape != expected)
    throw InputError(file, "/ct/sinogram",
                     "shape " + ct.sinogram.shape.to_string() + ", angles x detectors is " + expected.to_string());
  return g;
}

void store_geometry(const CtGeometry& g, CtData& ct) {
  ct.beam = g.beam;
  ct.detector_shape = g.fan_detector;
  ct.angles_rad = g.angles_rad;
  ct.detector_count = g.detector_count;
  ct.detector_spacing_mm = g.detector_spacing_mm;
  ct.detector_offset_mm = g.detector_offset_mm;
  ct.source_to_isocenter_mm = g.beam == CtBeam::kFan ? g.source_to_isocenter_mm : 0.0;
  ct.source_to_detector_mm = g.beam == CtBeam::kFan ? g.source_to_detector_mm : 0.0;
}

}  // namespace recofold
