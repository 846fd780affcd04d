// SPDX-License-Identifier: Apache-2.0
// Phantom model helpers: complexity test, validation, component-kind names.
#include "recofold/phantom/phantom.h"

#include <cmath>
#include <sstream>

namespace recofold {

bool Phantom::is_complex() const {
  if (phase0_rad != 0.0 || phase_gx != 0.0 || phase_gy != 0.0) return true;
  for (const Component& c : components)
    if (c.intensity.imag() != 0.0) return true;
  return false;
}

std::vector<std::string> Phantom::validate() const {
  std::vector<std::string> errors;
  auto num = [](double v) {
    std::ostringstream o;
    o << v;
    return o.str();
  };
  if (components.empty()) errors.push_back("no components; a phantom needs at least one");
  if (!(fov_mm > 0.0) || !std::isfinite(fov_mm)) errors.push_back("fov_mm = " + num(fov_mm) + "; must be > 0");
  if (!std::isfinite(phase0_rad) || !std::isfinite(phase_gx) || !std::isfinite(phase_gy))
    errors.push_back("global phase (phase0_rad, phase_gx, phase_gy) must be finite");
  for (size_t i = 0; i < components.size(); ++i) {
    const Component& c = components[i];
    const std::string where = "component " + std::to_string(i) + " (" + to_string(c.kind) + "): ";
    if (!std::isfinite(c.intensity.real()) || !std::isfinite(c.intensity.imag()))
      errors.push_back(where + "intensity must be finite");
    if (!(c.a > 0.0) || !std::isfinite(c.a)) errors.push_back(where + "a = " + num(c.a) + "; must be > 0");
    if (!(c.b > 0.0) || !std::isfinite(c.b)) errors.push_back(where + "b = " + num(c.b) + "; must be > 0");
    if (!std::isfinite(c.x0) || !std::isfinite(c.y0) || !std::isfinite(c.phi_deg))
      errors.push_back(where + "x0, y0 and phi_deg must be finite");
  }
  return errors;
}

const char* to_string(ComponentKind kind) {
  switch (kind) {
    case ComponentKind::kEllipse:
      return "ellipse";
    case ComponentKind::kGaussian:
      return "blob";
  }
  return "unknown";
}

std::optional<ComponentKind> parse_component_kind(const std::string& text) {
  if (text == "ellipse") return ComponentKind::kEllipse;
  if (text == "blob") return ComponentKind::kGaussian;
  return std::nullopt;
}

}  // namespace recofold
