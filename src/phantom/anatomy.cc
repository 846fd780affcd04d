// SPDX-License-Identifier: Apache-2.0
// The anatomy family: a jittered cartoon of an axial abdominal section with tissue values per contrast.
#include <algorithm>
#include <array>
#include <cmath>

#include "family_internal.h"

namespace recofold::internal {

namespace {

enum Tissue {
  kFat,
  kMuscle,
  kLiver,
  kSpleen,
  kKidney,
  kUrine,
  kBlood,
  kBowelFluid,
  kGas,
  kCorticalBone,
  kCancellousBone,
  kCsf,
  kTissueCount
};

// Tissue values (common practice, from memory; rounded):
//   mri: proton density relative to pure water;
//   ct:  mu / mu_water = 1 + HU / 1000 near 65 keV (fat -100 HU, muscle +50,
//        liver +60, spleen +50, kidney +40, blood +180 with contrast agent in
//        the portal-venous phase, cancellous bone +250, cortical bone +800
//        as a partial-volume shell).
constexpr double kMriValue[kTissueCount] = {0.90, 0.75, 0.70, 0.80, 0.85, 0.97, 0.82, 0.95, 0.0, 0.10, 0.60, 0.97};
constexpr double kCtValue[kTissueCount] = {0.90, 1.05, 1.06, 1.05, 1.04, 1.01, 1.18, 1.01, 0.0, 1.80, 1.25, 1.01};

class Builder {
 public:
  Builder(const FamilyOptions& o, Rng& rng) : o_(o), rng_(rng) {}

  double value(Tissue t) const {
    return quantise_value(o_.contrast == TissueContrast::kCt ? kCtValue[t] : kMriValue[t]);
  }

  static Component ellipse(double x0, double y0, double a, double b, double phi) {
    Component c;
    c.kind = ComponentKind::kEllipse;
    c.x0 = x0;
    c.y0 = y0;
    c.a = a;
    c.b = b;
    c.phi_deg = phi;
    return c;
  }

  // Places `c` with its centre jittered by up to `jitter` per try, shrinking
  // by 0.92 after every 8 failed tries; -1 when it never fits.
  int place(RegionTree& tree, const Component& c, double value, int under, double jitter, bool descend = false) {
    Component t = c;
    for (int attempt = 0; attempt < 32; ++attempt) {
      if (attempt > 0 && attempt % 8 == 0) {
        t.a *= 0.92;
        t.b *= 0.92;
      }
      t.x0 = c.x0 + (attempt == 0 ? 0.0 : rng_.uniform(-jitter, jitter));
      t.y0 = c.y0 + (attempt == 0 ? 0.0 : rng_.uniform(-jitter, jitter));
      const int at = tree.place(t, value, kRegionGap, 8, under, descend);
      if (at >= 0) return at;
    }
    return -1;
  }

  // A random ellipse at a random point of region `under`, as its direct child.
  int place_inside(RegionTree& tree, int under, double a, double b, double value) {
    const Component& host = tree.component(under);
    for (int attempt = 0; attempt < 24; ++attempt) {
      Component c = ellipse(0, 0, a, b, rng_.uniform(0.0, 180.0));
      point_inside_region(rng_, host, std::max(a, b), &c.x0, &c.y0);
      if (tree.place(c, value, kRegionGap, 8, under, false) >= 0) return tree.size() - 1;
    }
    return -1;
  }

  const FamilyOptions& o_;
  Rng& rng_;
};

}  // namespace

namespace {

// Texture: fine parenchymal blobs in the solid organs (liver, spleen, kidneys; -1 = absent),
// medium blobs in the fat, shrunk until the phantom's values are certified within bounds
// (none when no attempt is; the regions alone are kept).
void add_anatomy_texture(const FamilyOptions& o, Rng& rng, const RegionTree& tree, const std::array<int, 4>& organs,
                         int cavity, Phantom& p) {
  const double scale = o.texture_blobs / 300.0;
  const size_t regions = p.components.size();
  for (int attempt = 0; attempt < 12; ++attempt) {
    const double shrink = attempt < 3 ? 1.0 : std::pow(0.8, attempt - 2);
    p.components.resize(regions);
    auto organ_texture = [&](int region, int count, double lo, double hi, bool round) {
      if (region < 0) return;
      const double amplitude = shrink * o.texture_contrast * tree.value(region);
      for (int i = 0; i < count; ++i) {
        for (int tries = 0; tries < 20; ++tries) {  // in the organ itself, clear of its vessels or pelvis
          double x = 0.0, y = 0.0;
          point_inside_region(rng, tree.component(region), 2.0 * hi, &x, &y);
          if (!tree.disc_clear(x, y, 2.5 * hi, region)) continue;
          p.components.push_back(texture_blob(rng, lo, hi, round, amplitude, x, y));
          break;
        }
      }
    };
    auto fat_texture = [&](int region, int count) {
      const double amplitude = shrink * o.texture_contrast * tree.value(region);
      for (int i = 0; i < count; ++i) {
        for (int tries = 0; tries < 20; ++tries) {
          double x = 0.0, y = 0.0;
          point_inside_region(rng, tree.component(region), 0.0, &x, &y);
          const Component blob = texture_blob(rng, 0.02, 0.045, false, amplitude, x, y);
          if (!tree.disc_clear(x, y, 2.5 * std::max(blob.a, blob.b), region)) continue;  // clear of the organs
          p.components.push_back(blob);
          break;
        }
      }
    };
    const auto n = [&](double count) { return static_cast<int>(std::lround(count * scale)); };
    // About 360 parenchymal blobs per unit area (80 in a typical liver).
    const auto per_area = [&](int region) {
      return region < 0 ? 0 : n(360.0 * 3.14159265358979 * tree.component(region).a * tree.component(region).b);
    };
    organ_texture(organs[0], per_area(organs[0]), 0.006, 0.016, true);  // liver
    organ_texture(organs[1], per_area(organs[1]), 0.006, 0.016, true);  // spleen
    organ_texture(organs[2], per_area(organs[2]), 0.006, 0.014, true);  // kidneys
    organ_texture(organs[3], per_area(organs[3]), 0.006, 0.014, true);
    if (cavity != 0) fat_texture(cavity, n(30));
    fat_texture(0, n(16));
    if (certified_below(p, o.value_bound())) return;
  }
  p.components.resize(regions);
}

}  // namespace

Phantom make_anatomy_object(const FamilyOptions& o, Rng& rng) {
  Builder g(o, rng);
  // Body outline (subcutaneous fat), muscle wall, abdominal cavity.
  const double cx = rng.uniform(-0.03, 0.03), cy = rng.uniform(-0.06, 0.0);
  const double A = rng.uniform(0.80, 0.92), B = rng.uniform(0.56, 0.70), phi = rng.uniform(-4.0, 4.0);
  RegionTree tree(Builder::ellipse(cx, cy, A, B, phi), g.value(kFat));
  const double fat = rng.uniform(0.035, 0.08);
  const double Am = A - fat, Bm = B - fat;
  const int muscle = tree.place(Builder::ellipse(cx, cy, Am, Bm, phi), g.value(kMuscle), kRegionGap, 8, 0, false);
  const double Ac = Am - rng.uniform(0.035, 0.055), Bc = Bm - rng.uniform(0.10, 0.14);
  const double anterior = rng.uniform(0.035, 0.055);
  const double cyc = cy + Bm - anterior - Bc;
  int cavity = muscle >= 0 ? g.place(tree, Builder::ellipse(cx, cyc, Ac, Bc, phi), g.value(kFat), muscle, 0.01) : -1;
  if (cavity < 0) cavity = muscle >= 0 ? muscle : 0;  // keep going with fewer layers
  const Component& cav = tree.component(cavity);
  const double Ak = cav.a, Bk = cav.b, yk = cav.y0, xk = cav.x0;

  // Spine: posterior arch with the spinal canal, vertebral body above it.
  const double arch_a = rng.uniform(0.05, 0.065), arch_b = rng.uniform(0.035, 0.045);
  const double arch_y = yk - Bk + 0.03 + arch_b;
  const double vert_a = rng.uniform(0.07, 0.09), vert_b = vert_a * rng.uniform(0.8, 0.95);
  const double vert_y = arch_y + arch_b + 0.014 + vert_b;
  const double spine_x = xk + rng.uniform(-0.02, 0.02);
  const int arch = g.place(tree, Builder::ellipse(spine_x, arch_y, arch_a, arch_b, 0.0), g.value(kCorticalBone), cavity,
                           0.01);
  if (arch >= 0) {
    const Component& ac = tree.component(arch);
    g.place(tree, Builder::ellipse(ac.x0, ac.y0, 0.55 * ac.a, 0.55 * ac.b, 0.0), g.value(kCsf), arch, 0.0);
  }
  const int vertebra = g.place(tree, Builder::ellipse(spine_x, vert_y, vert_a, vert_b, rng.uniform(-5.0, 5.0)),
                               g.value(kCorticalBone), cavity, 0.01);
  if (vertebra >= 0) {
    const Component& vc = tree.component(vertebra);
    g.place(tree, Builder::ellipse(vc.x0, vc.y0, vc.a - 0.016, vc.b - 0.016, vc.phi_deg), g.value(kCancellousBone),
            vertebra, 0.0);
  }

  // Liver (the patient's right: image left), large and rotated.
  const Component liver_c = Builder::ellipse(xk - 0.42 * Ak + rng.uniform(-0.04, 0.04),
                                             yk + 0.15 * Bk + rng.uniform(-0.04, 0.04),
                                             rng.uniform(0.26, 0.34) * Ak / 0.8, rng.uniform(0.20, 0.27) * Bk / 0.55,
                                             rng.uniform(-35.0, 5.0));
  const int liver = g.place(tree, liver_c, g.value(kLiver), cavity, 0.04);

  // Great vessels in front of the spine.
  const double front = vert_y + vert_b;
  const double ra = rng.uniform(0.028, 0.04);
  g.place(tree, Builder::ellipse(spine_x + rng.uniform(0.02, 0.06), front + 0.02 + ra, ra, ra, 0.0), g.value(kBlood),
          cavity, 0.015);
  const double ia = rng.uniform(0.035, 0.05), ib = rng.uniform(0.022, 0.032);
  g.place(tree, Builder::ellipse(spine_x - rng.uniform(0.08, 0.12), front + 0.015 + ib, ia, ib, rng.uniform(-10.0, 10.0)),
          g.value(kBlood), cavity, 0.015);

  // Kidneys beside the spine, each with its renal pelvis towards the midline.
  int kidney[2] = {-1, -1};
  for (int side = 0; side < 2; ++side) {
    const double s = side == 0 ? -1.0 : 1.0;
    const double ka = rng.uniform(0.075, 0.10), kb = rng.uniform(0.045, 0.06);
    const Component kc = Builder::ellipse(spine_x + s * rng.uniform(0.20, 0.26), vert_y + rng.uniform(-0.02, 0.04), ka,
                                          kb, s * rng.uniform(55.0, 80.0));
    kidney[side] = g.place(tree, kc, g.value(kKidney), cavity, 0.03);
    if (kidney[side] >= 0) {
      const Component& k = tree.component(kidney[side]);
      const double pa = k.a * rng.uniform(0.35, 0.5), pb = k.b * rng.uniform(0.35, 0.5);
      g.place(tree, Builder::ellipse(k.x0 - s * 0.25 * k.b, k.y0, pa, pb, k.phi_deg), g.value(kUrine), kidney[side],
              0.01);
    }
  }

  // Spleen (the patient's left: image right, posterior-lateral).
  const int spleen = g.place(tree, Builder::ellipse(xk + 0.60 * Ak + rng.uniform(-0.03, 0.03),
                                                    yk + rng.uniform(-0.05, 0.1), rng.uniform(0.09, 0.13),
                                                    rng.uniform(0.05, 0.08), rng.uniform(40.0, 75.0)),
                             g.value(kSpleen), cavity, 0.03);

  // Bowel loops anywhere in the cavity: fluid or gas.
  const int loops = 4 + static_cast<int>(rng.below(6));
  for (int i = 0; i < loops; ++i) {
    const double a = rng.uniform(0.03, 0.07), b = a * rng.uniform(0.5, 1.0);
    const Tissue content = rng.uniform() < 0.3 ? kGas : kBowelFluid;
    g.place_inside(tree, cavity, a, b, g.value(content));
  }

  // Liver vessels and low-contrast lesions.
  if (liver >= 0) {
    const int vessels = 3 + static_cast<int>(rng.below(5));
    for (int i = 0; i < vessels; ++i) {
      const double a = rng.uniform(0.012, 0.028), b = a * rng.uniform(0.4, 1.0);
      g.place_inside(tree, liver, a, b, g.value(kBlood));
    }
    const int lesions = static_cast<int>(rng.below(3));
    for (int i = 0; i < lesions; ++i) {
      const double r = rng.uniform(0.02, 0.05);
      const double sign = rng.uniform() < 0.5 ? -1.0 : 1.0;
      const double v = quantise_value(tree.value(liver) * (1.0 + sign * rng.uniform(0.05, 0.12)));
      g.place_inside(tree, liver, r, r * rng.uniform(0.7, 1.0), v);
    }
  }

  Phantom p;
  tree.emit(&p);
  if (!o.texture || o.texture_contrast == 0.0) return p;

  add_anatomy_texture(o, rng, tree, {liver, spleen, kidney[0], kidney[1]}, cavity, p);
  return p;
}

}  // namespace recofold::internal
