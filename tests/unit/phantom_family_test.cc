// SPDX-License-Identifier: Apache-2.0
// Tests of random phantom families: reproducibility, independence of count, texture scales, nesting, physical values.
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>

#include "phantom_test_util.h"
#include "recofold/phantom/bounds.h"
#include "recofold/phantom/family.h"
#include "recofold/phantom/phantom_table.h"
#include "recofold/phantom/raster.h"

namespace recofold {
namespace {

bool same_bytes(const Table& a, const Table& b) {
  return a.rows.shape == b.rows.shape &&
         std::memcmp(a.rows.ptr(), b.rows.ptr(), a.rows.data.size() * sizeof(double)) == 0;
}

std::vector<FamilyOptions> every_family() {
  return {family_options(Family::kEllipses), family_options(Family::kTextured), family_options(Family::kAnatomy),
          family_options(Family::kAnatomy, TissueContrast::kCt)};
}

TEST(PhantomFamily, SameSeedGivesByteIdenticalObjectsAndRasters) {
  for (const FamilyOptions& o : every_family()) {
    const std::vector<Phantom> a = make_family(o, 42, 6), b = make_family(o, 42, 6);
    EXPECT_TRUE(same_bytes(phantoms_to_table(a), phantoms_to_table(b)));
    const NdArray<cfloat> ra = rasterize_stack(a, 64, 64), rb = rasterize_stack(b, 64, 64);
    EXPECT_EQ(std::memcmp(ra.ptr(), rb.ptr(), ra.data.size() * sizeof(cfloat)), 0);
  }
}

TEST(PhantomFamily, DifferentSeedsOrIndicesGiveDifferentObjects) {
  for (const FamilyOptions& o : every_family()) {
    EXPECT_FALSE(same_bytes(phantom_to_table(make_family_object(o, 1, 0)), phantom_to_table(make_family_object(o, 2, 0))));
    EXPECT_FALSE(same_bytes(phantom_to_table(make_family_object(o, 1, 0)), phantom_to_table(make_family_object(o, 1, 1))));
  }
}

TEST(PhantomFamily, ObjectDoesNotDependOnHowManyAreDrawn) {
  for (const FamilyOptions& o : every_family()) {
    const std::vector<Phantom> few = make_family(o, 9, 3), many = make_family(o, 9, 40);
    for (size_t i = 0; i < few.size(); ++i)
      EXPECT_TRUE(same_bytes(phantom_to_table(few[i]), phantom_to_table(many[i])));
  }
}

TEST(PhantomFamily, KnownSeedGivesKnownComponents) {
  // Pins the generator: a change of draws (order, ranges, Rng) shows up here,
  // since studies rely on seeds naming the same objects across versions.
  // Values printed once from this version (%.17g) and frozen.
  const Phantom p = make_family_object(family_options(Family::kEllipses), 2026, 0);
  ASSERT_EQ(p.components.size(), 10u);
  EXPECT_EQ(p.components[0].a, 0.70821868694034018);
  EXPECT_EQ(p.components[0].intensity.real(), 0.12262725830078125);
  EXPECT_EQ(p.components[1].x0, -0.27693310427692486);
  EXPECT_EQ(p.components[1].phi_deg, 128.9458985535272);
  const Phantom q = make_family_object(family_options(Family::kAnatomy), 2026, 0);
  ASSERT_EQ(q.components.size(), 127u);
  EXPECT_EQ(q.components[0].b, 0.69856326002385172);
  EXPECT_EQ(q.components[5].x0, -0.025051780541827658);
}

TEST(PhantomFamily, TexturedObjectsCarrySeveralScalesDownToAFewPixels) {
  const FamilyOptions o = family_options(Family::kTextured);
  const Phantom p = make_family_object(o, 3, 0);
  int blobs = 0, fine = 0, coarse = 0;
  for (const Component& c : p.components) {
    if (c.kind != ComponentKind::kGaussian) continue;
    ++blobs;
    fine += c.a <= 0.02 ? 1 : 0;       // FWHM <= 0.047: about 3 pixels at 128^2
    coarse += c.a >= 0.08 ? 1 : 0;
    EXPECT_GT(c.intensity.real(), 0.0);  // texture is positive
  }
  EXPECT_GE(blobs, 300);
  EXPECT_GE(fine, 300);
  EXPECT_GE(coarse, 6);
  const Phantom flat = make_family_object(family_options(Family::kEllipses), 3, 0);
  for (const Component& c : flat.components) EXPECT_EQ(c.kind, ComponentKind::kEllipse);
}

// Points on the boundary of ellipse c (n of them).
std::vector<std::pair<double, double>> boundary(const Component& c, int n) {
  std::vector<std::pair<double, double>> out;
  const double phi = c.phi_deg * 3.14159265358979323846 / 180.0;
  for (int j = 0; j < n; ++j) {
    const double t = 2.0 * 3.14159265358979323846 * j / n;
    const double u = c.a * std::cos(t), v = c.b * std::sin(t);
    out.emplace_back(c.x0 + std::cos(phi) * u - std::sin(phi) * v, c.y0 + std::sin(phi) * u + std::cos(phi) * v);
  }
  return out;
}

bool contains(const Component& e, double x, double y) {
  const double phi = e.phi_deg * 3.14159265358979323846 / 180.0;
  const double dx = x - e.x0, dy = y - e.y0;
  const double u = std::cos(phi) * dx + std::sin(phi) * dy, v = -std::sin(phi) * dx + std::cos(phi) * dy;
  return u * u / (e.a * e.a) + v * v / (e.b * e.b) <= 1.0;
}

TEST(PhantomFamily, EllipsesAreNestedOrDisjointNeverOverlapping) {
  // Checked independently of the generator's own tests: for every pair of
  // ellipses, dense boundary points of one are all inside the other or all
  // outside it (all outside: disjoint, or the other one lies inside it).
  for (const FamilyOptions& o : every_family()) {
    for (uint64_t i = 0; i < 12; ++i) {
      const Phantom p = make_family_object(o, 77, i);
      std::vector<Component> ellipses;
      for (const Component& c : p.components)
        if (c.kind == ComponentKind::kEllipse) ellipses.push_back(c);
      for (size_t m = 0; m < ellipses.size(); ++m) {
        for (size_t n = 0; n < ellipses.size(); ++n) {
          if (m == n) continue;
          const Component &f = ellipses[m], &e = ellipses[n];
          int in = 0;
          const auto pts = boundary(f, 720);
          for (const auto& [x, y] : pts) in += contains(e, x, y) ? 1 : 0;
          const bool nested = in == static_cast<int>(pts.size());
          const bool apart = in == 0;
          EXPECT_TRUE(nested || apart) << to_string(o.family) << " object " << i << ": ellipses " << m << " and " << n
                                       << " overlap (" << in << " of " << pts.size() << " boundary points inside)";
        }
      }
    }
  }
}

TEST(PhantomFamily, AnatomyHasItsOrgansAndTissueValuesPerContrast) {
  const Phantom mri = make_family_object(family_options(Family::kAnatomy), 5, 1);
  const Phantom ct = make_family_object(family_options(Family::kAnatomy, TissueContrast::kCt), 5, 1);
  int mri_ellipses = 0, ct_ellipses = 0;
  for (const Component& c : mri.components) mri_ellipses += c.kind == ComponentKind::kEllipse ? 1 : 0;
  for (const Component& c : ct.components) ct_ellipses += c.kind == ComponentKind::kEllipse ? 1 : 0;
  EXPECT_GE(mri_ellipses, 15);  // body, muscle, cavity, spine (4), liver, vessels, kidneys, spleen, bowel
  EXPECT_EQ(mri_ellipses, ct_ellipses);  // same geometry, other values
  // The body outline is fat: 0.9 relative proton density and 0.9 mu/mu_water.
  EXPECT_NEAR(phantom_value(mri, mri.components[0].x0 + 0.98 * mri.components[0].a, mri.components[0].y0), 0.9, 0.03);
  // Bone is the brightest tissue in CT (1.8) and dark in proton density (0.1).
  ValueBoundsOptions vo;
  vo.tolerance = 1e-4;
  vo.find_min = false;
  const ValueBounds bct = value_bounds(ct, vo);
  EXPECT_NEAR(bct.max_attained, 1.8, 0.01);
  EXPECT_LE(value_bounds(mri, vo).max_upper, 1.0);
  EXPECT_EQ(mri.fov_mm, 360.0);
}

TEST(PhantomFamily, OptionsValidationListsEveryBadField) {
  FamilyOptions o;
  o.components = -1;
  o.intensity_min = 2.0;
  o.size_max = 0.9;
  const std::vector<std::string> e = o.validate();
  EXPECT_EQ(e.size(), 3u);
  EXPECT_TRUE(FamilyOptions{}.validate().empty());
  FamilyOptions negative;
  negative.intensity_min = -0.1;  // physically impossible
  EXPECT_EQ(negative.validate().size(), 1u);
  FamilyOptions too_bright;
  too_bright.intensity_max = 1.2;
  EXPECT_EQ(too_bright.validate().size(), 1u);
  EXPECT_EQ(parse_family("textured"), Family::kTextured);
  EXPECT_EQ(parse_family("ellipses"), Family::kEllipses);
  EXPECT_EQ(parse_family("anatomy"), Family::kAnatomy);
  EXPECT_FALSE(parse_family("blobs").has_value());
  EXPECT_EQ(parse_tissue_contrast("ct"), TissueContrast::kCt);
  EXPECT_FALSE(parse_tissue_contrast("pet").has_value());
  EXPECT_EQ(family_options(Family::kAnatomy, TissueContrast::kCt).value_bound(), 2.0);
  EXPECT_EQ(family_options(Family::kTextured).value_bound(), 1.0);
}

}  // namespace
}  // namespace recofold
