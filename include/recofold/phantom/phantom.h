// SPDX-License-Identifier: Apache-2.0
// Analytic phantoms: sums of uniform ellipses and anisotropic Gaussian blobs on
// the square [-1,1]^2, with exact raster, exact Fourier transform and exact
// line integrals.
//
// Coordinates: x to the right, y up, both in [-1, 1]; the physical field of
// view `fov_mm` is the width of that square. In a raster of ny x nx pixels,
// row 0 is the top (y near +1) and column 0 the left (x near -1); pixel (iy, ix)
// has its centre at x = -1 + (2 ix + 1)/nx, y = 1 - (2 iy + 1)/ny.
//
// The evaluations live beside this header: raster.h (rasterize,
// rasterize_stack), fourier.h (fourier_transform, kspace_on_grid),
// line_integral.h (line_integral, line_integrals, line_integrals_through,
// parallel_sinogram); phantom_table.h loads phantoms/*.toml and converts to and
// from the /phantom/components table of phantom files; family.h draws seeded
// random objects.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

enum class ComponentKind { kEllipse, kGaussian };

// One component. For an ellipse, (a, b) are the semi-axes along its own x' and
// y' axes; for a Gaussian blob, exp(-x'^2/(2a^2) - y'^2/(2b^2)), i.e. (a, b)
// are the standard deviations. (x', y') = R(-phi) ((x, y) - (x0, y0)), phi in
// degrees counter-clockwise. Intensity may be complex (MRI phase).
struct Component {
  ComponentKind kind = ComponentKind::kEllipse;
  cdouble intensity{1.0, 0.0};
  double a = 0.5, b = 0.5;
  double x0 = 0.0, y0 = 0.0;
  double phi_deg = 0.0;
};

// A phantom: components that add, a field of view, and an optional global
// phase exp(i (phase0 + 2 pi (gx x + gy y))) for MRI realism. A constant plus
// linear phase keeps every evaluation exact: it shifts k-space by (gx, gy).
struct Phantom {
  std::string name;
  std::string description;  // free text, e.g. where the numbers come from
  std::vector<Component> components;
  double fov_mm = 256.0;
  double phase0_rad = 0.0;
  double phase_gx = 0.0, phase_gy = 0.0;  // cycles per unit length of the [-1,1] square

  bool is_complex() const;  // any complex intensity or a non-zero phase

  // Every violation of the model's rules, one message each ("component 3: b =
  // -0.1; must be > 0"); empty means valid. Rules: at least one component;
  // finite intensities, centres and angles; a, b > 0; fov_mm > 0; finite phase.
  std::vector<std::string> validate() const;

  // Length in mm of one unit of the [-1,1] square: fov_mm / 2. Multiply line
  // integrals by it to get intensity x mm; Fourier values by its square for mm^2.
  double mm_per_unit() const { return fov_mm / 2.0; }
};

// Parse and print of ComponentKind, shared by tables and files:
// "ellipse" <-> kEllipse, "blob" <-> kGaussian.
const char* to_string(ComponentKind kind);
std::optional<ComponentKind> parse_component_kind(const std::string& text);

}  // namespace recofold
