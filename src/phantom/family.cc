// SPDX-License-Identifier: Apache-2.0
// Seeded random phantom families: nested ellipse regions, positive multi-scale blob texture, certified bounds.
#include "recofold/phantom/family.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "family_internal.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/core/rng.h"
#include "recofold/phantom/bounds.h"

namespace recofold {

namespace internal {

void point_inside(Rng& rng, double x0, double y0, double a, double b, double margin, double* x, double* y) {
  a = std::max(a - margin, 1e-3);
  b = std::max(b - margin, 1e-3);
  for (int attempt = 0; attempt < 1000; ++attempt) {
    const double u = rng.uniform(-1.0, 1.0), v = rng.uniform(-1.0, 1.0);
    if (u * u + v * v < 1.0) {
      *x = x0 + a * u;
      *y = y0 + b * v;
      return;
    }
  }
  *x = x0;  // unreachable in practice (acceptance pi/4 per draw)
  *y = y0;
}

void point_inside_region(Rng& rng, const Component& e, double margin, double* x, double* y) {
  double u = 0.0, v = 0.0;
  point_inside(rng, 0.0, 0.0, e.a, e.b, margin, &u, &v);
  const ComponentFrame f = make_frame(e);
  *x = e.x0 + f.cos_phi * u - f.sin_phi * v;
  *y = e.y0 + f.sin_phi * u + f.cos_phi * v;
}

Component texture_blob(Rng& rng, double sigma_lo, double sigma_hi, bool round, double amplitude, double x, double y) {
  Component c;
  c.kind = ComponentKind::kGaussian;
  c.a = rng.uniform(sigma_lo, sigma_hi);
  c.b = round ? c.a : c.a * rng.uniform(0.4, 1.0);
  c.phi_deg = round ? 0.0 : rng.uniform(0.0, 180.0);
  c.intensity = cdouble(amplitude * rng.uniform(0.3, 1.0), 0.0);
  c.x0 = x;
  c.y0 = y;
  return c;
}

bool certified_below(const Phantom& p, double bound) {
  ValueBoundsOptions vo;
  vo.find_min = false;
  vo.upper_limit = bound - 1e-9;
  vo.tolerance = 1e-9;
  vo.max_cells = 100000;
  return value_bounds(p, vo).certified_at_most(vo.upper_limit);
}

}  // namespace internal

namespace {

// Support and random regions of the ellipses and textured families.
internal::RegionTree draw_regions(const FamilyOptions& o, Rng& rng, double* sx, double* sy, double* sa, double* sb) {
  Component support;
  support.kind = ComponentKind::kEllipse;
  support.a = rng.uniform(0.65, 0.9);
  support.b = rng.uniform(0.65, 0.9);
  support.x0 = rng.uniform(-0.05, 0.05);
  support.y0 = rng.uniform(-0.05, 0.05);
  *sx = support.x0;
  *sy = support.y0;
  *sa = support.a;
  *sb = support.b;
  internal::RegionTree tree(support, internal::quantise_value(rng.uniform(o.intensity_min, o.intensity_max)));
  for (int i = 0; i < o.components; ++i) {
    Component c;
    c.kind = ComponentKind::kEllipse;
    c.a = rng.uniform(o.size_min, o.size_max);
    c.b = rng.uniform(o.size_min, o.size_max);
    c.phi_deg = rng.uniform(0.0, 180.0);
    const double value = internal::quantise_value(rng.uniform(o.intensity_min, o.intensity_max));
    for (int attempt = 0; attempt < 24; ++attempt) {
      if (attempt > 0 && attempt % 8 == 0) {
        c.a *= 0.8;
        c.b *= 0.8;
        if (std::min(c.a, c.b) < o.size_min) break;
      }
      internal::point_inside(rng, support.x0, support.y0, support.a, support.b, std::max(c.a, c.b), &c.x0, &c.y0);
      if (tree.place(c, value, internal::kRegionGap, 3) >= 0) break;
    }
  }
  return tree;
}

void add_texture(const FamilyOptions& o, Rng& rng, double sx, double sy, double sa, double sb, double scale,
                 Phantom* p) {
  const double amplitude = scale * o.texture_contrast * o.intensity_max;
  auto blobs = [&](int count, double lo, double hi, bool round) {
    for (int i = 0; i < count; ++i) {
      // Centre first so the margin can use the largest sigma of the scale.
      double x = 0.0, y = 0.0;
      internal::point_inside(rng, sx, sy, sa, sb, 2.0 * hi, &x, &y);
      p->components.push_back(internal::texture_blob(rng, lo, hi, round, amplitude, x, y));
    }
  };
  blobs(6, 0.08, 0.2, false);
  blobs(40, 0.025, 0.06, false);
  blobs(o.texture_blobs, 0.006, 0.02, true);
}

}  // namespace

std::string_view to_string(Family family) {
  switch (family) {
    case Family::kEllipses:
      return "ellipses";
    case Family::kTextured:
      return "textured";
    case Family::kAnatomy:
      return "anatomy";
  }
  return "unknown";
}

std::optional<Family> parse_family(std::string_view text) {
  if (text == "ellipses") return Family::kEllipses;
  if (text == "textured") return Family::kTextured;
  if (text == "anatomy") return Family::kAnatomy;
  return std::nullopt;
}

std::string family_names() { return "ellipses, textured, anatomy"; }

std::string_view to_string(TissueContrast contrast) { return contrast == TissueContrast::kCt ? "ct" : "mri"; }

std::optional<TissueContrast> parse_tissue_contrast(std::string_view text) {
  if (text == "mri") return TissueContrast::kMri;
  if (text == "ct") return TissueContrast::kCt;
  return std::nullopt;
}

std::vector<std::string> FamilyOptions::validate() const {
  std::vector<std::string> e;
  if (components < 0 || components > 1000)
    e.push_back("family.components = " + std::to_string(components) + "; must be in 0..1000");
  if (!(intensity_min >= 0.0 && intensity_min < intensity_max && intensity_max <= kFamilyValueBound))
    e.push_back("family.intensity_min = " + format_sig(intensity_min, 6) + ", intensity_max = " + format_sig(intensity_max, 6) +
                "; must satisfy 0 <= min < max <= " + format_sig(kFamilyValueBound, 6) +
                " (values are relative to water and never negative)");
  if (!(size_min > 0.0 && size_min <= size_max && size_max <= 0.5))
    e.push_back("family.size_min = " + format_sig(size_min, 6) + ", size_max = " + format_sig(size_max, 6) +
                "; must satisfy 0 < min <= max <= 0.5");
  if (texture_blobs < 0 || texture_blobs > 5000)
    e.push_back("family.texture_blobs = " + std::to_string(texture_blobs) + "; must be in 0..5000");
  if (!(texture_contrast >= 0.0 && texture_contrast <= 1.0))
    e.push_back("family.texture_contrast = " + format_sig(texture_contrast, 6) + "; must be in [0, 1]");
  if (!(fov_mm > 0.0 && std::isfinite(fov_mm))) e.push_back("family.fov_mm = " + format_sig(fov_mm, 6) + "; must be > 0");
  return e;
}

double FamilyOptions::value_bound() const {
  if (family == Family::kAnatomy) return contrast == TissueContrast::kCt ? 2.0 : 1.0;
  return kFamilyValueBound;
}

FamilyOptions family_options(Family family, TissueContrast contrast) {
  FamilyOptions o;
  o.family = family;
  o.contrast = contrast;
  o.texture = family != Family::kEllipses;
  if (family == Family::kEllipses) o.intensity_max = 1.0;
  if (family == Family::kAnatomy) {
    o.texture_contrast = 0.05;
    o.fov_mm = 360.0;
  }
  return o;
}

Phantom make_family_object(const FamilyOptions& o, uint64_t seed, uint64_t index) {
  const std::vector<std::string> errors = o.validate();
  RECOFOLD_CHECK(errors.empty()) << errors.front();
  Rng rng = Rng::for_stream(seed, index);
  const std::string fam(to_string(o.family));
  if (o.family == Family::kAnatomy) {
    Phantom p = internal::make_anatomy_object(o, rng);
    p.name = fam + "-" + std::to_string(seed) + "-" + std::to_string(index);
    p.description = "random object " + std::to_string(index) + " of family 'anatomy' (" +
                    std::string(to_string(o.contrast)) + " contrast), seed " + std::to_string(seed);
    p.fov_mm = o.fov_mm;
    return p;
  }
  Phantom p;
  p.name = fam + "-" + std::to_string(seed) + "-" + std::to_string(index);
  p.description = "random object " + std::to_string(index) + " of family '" + fam + "', seed " + std::to_string(seed);
  p.fov_mm = o.fov_mm;
  double sx = 0.0, sy = 0.0, sa = 0.0, sb = 0.0;
  const internal::RegionTree tree = draw_regions(o, rng, &sx, &sy, &sa, &sb);
  tree.emit(&p);
  if (!o.texture || o.texture_contrast == 0.0) return p;
  const size_t regions = p.components.size();
  for (int attempt = 0; attempt < 12; ++attempt) {
    const double scale = attempt < 3 ? 1.0 : std::pow(0.8, attempt - 2);
    p.components.resize(regions);
    add_texture(o, rng, sx, sy, sa, sb, scale, &p);
    if (internal::certified_below(p, kFamilyValueBound)) return p;
  }
  p.components.resize(regions);  // regions alone are within [intensity_min, intensity_max]
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
