// SPDX-License-Identifier: Apache-2.0
// Seeded random phantom families: ellipses inside a support, optional multi-scale blob texture.
#include "recofold/phantom/family.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"

namespace recofold {

namespace {
struct Support {
  double x0, y0, a, b;
};

// A point uniformly inside the support shrunk by `margin` on both semi-axes
// (for an axis-aligned ellipse, a disc of radius `margin` around such a point
// stays inside the support). Rejection sampling with arithmetic only.
void point_inside(Rng& rng, const Support& s, double margin, double* x, double* y) {
  const double a = std::max(s.a - margin, 1e-3), b = std::max(s.b - margin, 1e-3);
  for (int attempt = 0; attempt < 1000; ++attempt) {
    const double u = rng.uniform(-1.0, 1.0), v = rng.uniform(-1.0, 1.0);
    if (u * u + v * v < 1.0) {
      *x = s.x0 + a * u;
      *y = s.y0 + b * v;
      return;
    }
  }
  *x = s.x0;  // unreachable in practice (acceptance pi/4 per draw)
  *y = s.y0;
}

void add_blobs(Rng& rng, const Support& s, int count, double sigma_lo, double sigma_hi, bool round,
               double amplitude, Phantom* p) {
  for (int i = 0; i < count; ++i) {
    Component c;
    c.kind = ComponentKind::kGaussian;
    c.a = rng.uniform(sigma_lo, sigma_hi);
    c.b = round ? c.a : c.a * rng.uniform(0.4, 1.0);
    c.phi_deg = round ? 0.0 : rng.uniform(0.0, 180.0);
    const double sign = rng.uniform() < 0.5 ? -1.0 : 1.0;
    c.intensity = cdouble(sign * amplitude * rng.uniform(0.3, 1.0), 0.0);
    point_inside(rng, s, 2.0 * std::max(c.a, c.b), &c.x0, &c.y0);
    p->components.push_back(c);
  }
}

std::string num(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}
}  // namespace

std::string_view to_string(Family family) {
  switch (family) {
    case Family::kEllipses:
      return "ellipses";
    case Family::kTextured:
      return "textured";
  }
  return "unknown";
}

std::optional<Family> parse_family(std::string_view text) {
  if (text == "ellipses") return Family::kEllipses;
  if (text == "textured") return Family::kTextured;
  return std::nullopt;
}

std::string family_names() { return "ellipses, textured"; }

std::vector<std::string> FamilyOptions::validate() const {
  std::vector<std::string> e;
  if (components < 0 || components > 1000)
    e.push_back("family.components = " + std::to_string(components) + "; must be in 0..1000");
  if (!(std::isfinite(intensity_min) && std::isfinite(intensity_max) && intensity_min < intensity_max))
    e.push_back("family.intensity_min = " + num(intensity_min) + ", intensity_max = " + num(intensity_max) +
                "; must be finite with min < max");
  if (!(size_min > 0.0 && size_min <= size_max && size_max <= 0.5))
    e.push_back("family.size_min = " + num(size_min) + ", size_max = " + num(size_max) +
                "; must satisfy 0 < min <= max <= 0.5");
  if (texture_blobs < 0 || texture_blobs > 5000)
    e.push_back("family.texture_blobs = " + std::to_string(texture_blobs) + "; must be in 0..5000");
  if (!(texture_contrast >= 0.0 && texture_contrast <= 1.0))
    e.push_back("family.texture_contrast = " + num(texture_contrast) + "; must be in [0, 1]");
  if (!(fov_mm > 0.0 && std::isfinite(fov_mm))) e.push_back("family.fov_mm = " + num(fov_mm) + "; must be > 0");
  return e;
}

FamilyOptions family_options(Family family) {
  FamilyOptions o;
  o.family = family;
  o.texture = family == Family::kTextured;
  return o;
}

Phantom make_family_object(const FamilyOptions& o, uint64_t seed, uint64_t index) {
  const std::vector<std::string> errors = o.validate();
  RECOFOLD_CHECK(errors.empty()) << errors.front();
  Rng rng = Rng::for_stream(seed, index);
  Phantom p;
  p.name = std::string(to_string(o.family)) + "-" + std::to_string(seed) + "-" + std::to_string(index);
  p.description = "random object " + std::to_string(index) + " of family '" + std::string(to_string(o.family)) +
                  "', seed " + std::to_string(seed);
  p.fov_mm = o.fov_mm;

  Support s;
  s.a = rng.uniform(0.65, 0.9);
  s.b = rng.uniform(0.65, 0.9);
  s.x0 = rng.uniform(-0.05, 0.05);
  s.y0 = rng.uniform(-0.05, 0.05);
  const double base = rng.uniform(o.intensity_min, o.intensity_max);
  Component support;
  support.kind = ComponentKind::kEllipse;
  support.intensity = cdouble(base, 0.0);
  support.a = s.a;
  support.b = s.b;
  support.x0 = s.x0;
  support.y0 = s.y0;
  p.components.push_back(support);

  for (int i = 0; i < o.components; ++i) {
    Component c;
    c.kind = ComponentKind::kEllipse;
    c.a = rng.uniform(o.size_min, o.size_max);
    c.b = rng.uniform(o.size_min, o.size_max);
    c.phi_deg = rng.uniform(0.0, 180.0);
    c.intensity = cdouble(rng.uniform(o.intensity_min, o.intensity_max) - base, 0.0);
    point_inside(rng, s, std::max(c.a, c.b), &c.x0, &c.y0);
    p.components.push_back(c);
  }

  if (o.texture) {
    const double amplitude = o.texture_contrast * std::max(std::abs(o.intensity_max), std::abs(o.intensity_min));
    add_blobs(rng, s, 6, 0.08, 0.2, false, amplitude, &p);
    add_blobs(rng, s, 40, 0.025, 0.06, false, amplitude, &p);
    add_blobs(rng, s, o.texture_blobs, 0.006, 0.02, true, amplitude, &p);
  }
  return p;
}

std::vector<Phantom> make_family(const FamilyOptions& options, uint64_t seed, int count) {
  RECOFOLD_CHECK(count >= 0) << "count " << count;
  const std::vector<std::string> errors = options.validate();
  RECOFOLD_CHECK(errors.empty()) << errors.front();
  std::vector<Phantom> out(static_cast<size_t>(count));
#pragma omp parallel for schedule(dynamic, 8)
  for (int i = 0; i < count; ++i) out[static_cast<size_t>(i)] = make_family_object(options, seed, static_cast<uint64_t>(i));
  return out;
}

}  // namespace recofold
