// SPDX-License-Identifier: Apache-2.0
// Private: components with their rotation precomputed, shared by the evaluators.
#pragma once

#include <cmath>
#include <vector>

#include "recofold/phantom/phantom.h"

namespace recofold::internal {

// A component ready for evaluation: local coordinates are
//   x' =  cos_phi (x - x0) + sin_phi (y - y0)
//   y' = -sin_phi (x - x0) + cos_phi (y - y0)     (R(-phi) applied to x - c)
struct ComponentFrame {
  ComponentKind kind = ComponentKind::kEllipse;
  double rho_re = 0.0, rho_im = 0.0;
  double a = 1.0, b = 1.0;
  double x0 = 0.0, y0 = 0.0;
  double cos_phi = 1.0, sin_phi = 0.0;
};

inline ComponentFrame make_frame(const Component& c) {
  constexpr double kDegToRad = 3.14159265358979323846 / 180.0;
  ComponentFrame f;
  f.kind = c.kind;
  f.rho_re = c.intensity.real();
  f.rho_im = c.intensity.imag();
  f.a = c.a;
  f.b = c.b;
  f.x0 = c.x0;
  f.y0 = c.y0;
  // Exact values at multiples of 90 degrees keep axis-aligned shapes exact.
  const double r = std::remainder(c.phi_deg, 360.0);
  if (r == 0.0) {
    f.cos_phi = 1.0, f.sin_phi = 0.0;
  } else if (r == 90.0) {
    f.cos_phi = 0.0, f.sin_phi = 1.0;
  } else if (r == -90.0) {
    f.cos_phi = 0.0, f.sin_phi = -1.0;
  } else if (r == 180.0 || r == -180.0) {
    f.cos_phi = -1.0, f.sin_phi = 0.0;
  } else {
    f.cos_phi = std::cos(c.phi_deg * kDegToRad);
    f.sin_phi = std::sin(c.phi_deg * kDegToRad);
  }
  return f;
}

inline std::vector<ComponentFrame> make_frames(const Phantom& p) {
  std::vector<ComponentFrame> out;
  out.reserve(p.components.size());
  for (const Component& c : p.components) out.push_back(make_frame(c));
  return out;
}

}  // namespace recofold::internal
