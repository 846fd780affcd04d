// SPDX-License-Identifier: Apache-2.0
// Physical values of every family: 10,000 seeded objects each are certified within [0, bound]; rasters agree.
#include <gtest/gtest.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <string>

#include "recofold/phantom/bounds.h"
#include "recofold/phantom/family.h"
#include "recofold/phantom/raster.h"

namespace recofold {
namespace {

struct Case {
  std::string label;
  FamilyOptions options;
};

std::vector<Case> cases() {
  return {{"ellipses", family_options(Family::kEllipses)},
          {"textured", family_options(Family::kTextured)},
          {"anatomy (mri)", family_options(Family::kAnatomy)},
          {"anatomy (ct)", family_options(Family::kAnatomy, TissueContrast::kCt)}};
}

// The fast path: the analytic description of each object, no raster. Each
// object's minimum is certified >= 0 and its maximum <= the documented bound
// by value_bounds() over the field of view (phantom/bounds.h).
// AddressSanitizer builds (make check-sanitize) check 1,000 objects per family:
// the same code paths, within the test time-out of a build ten times slower.
#if defined(__SANITIZE_ADDRESS__)
constexpr int kCount = 1000;
#else
constexpr int kCount = 10000;
#endif

TEST(PhantomPhysical, TenThousandObjectsPerFamilyAreNonNegativeAndBelowTheirBound) {
  for (const Case& c : cases()) {
    const double bound = c.options.value_bound();
    const std::vector<Phantom> objects = make_family(c.options, 20260, kCount);
    std::atomic<int> below_zero{0}, above_bound{0}, unresolved{0};
    std::atomic<int> first_bad{-1};
#pragma omp parallel for schedule(dynamic, 16)
    for (int i = 0; i < kCount; ++i) {
      ValueBoundsOptions vo;
      vo.lower_limit = 0.0;
      vo.upper_limit = bound;
      vo.tolerance = 1e-12;
      const ValueBounds b = value_bounds(objects[static_cast<size_t>(i)], vo);
      const bool low = !b.certified_at_least(0.0), high = !b.certified_at_most(bound);
      below_zero += low ? 1 : 0;
      above_bound += high ? 1 : 0;
      unresolved += (!b.min_resolved || !b.max_resolved) ? 1 : 0;
      if (low || high) {
        int expected = -1;
        first_bad.compare_exchange_strong(expected, i);
      }
    }
    EXPECT_EQ(below_zero.load(), 0) << c.label << ": first object not certified: " << first_bad.load();
    EXPECT_EQ(above_bound.load(), 0) << c.label << ": first object not certified: " << first_bad.load();
    EXPECT_EQ(unresolved.load(), 0) << c.label;
  }
}

// The raster check on a sample: the anti-aliased 128^2 raster (pixel
// averages) stays in [0, bound] up to float32 rounding, and inside the
// certified enclosure of its own object.
TEST(PhantomPhysical, RastersOfASampleStayInsideTheCertifiedRange) {
  for (const Case& c : cases()) {
    const double bound = c.options.value_bound();
    for (uint64_t i = 0; i < 40; ++i) {
      const Phantom p = make_family_object(c.options, 20260, i * 241);  // spread over the 10,000
      ValueBoundsOptions vo;
      vo.tolerance = 1e-6;
      const ValueBounds b = value_bounds(p, vo);
      const ImageF r = real_part(rasterize(p, 128, 128));
      const double lo = r.minCoeff(), hi = r.maxCoeff();
      EXPECT_GE(lo, -1e-6) << c.label << " object " << i * 241;
      EXPECT_LE(hi, bound + 1e-6) << c.label << " object " << i * 241;
      EXPECT_GE(lo, b.min_lower - 1e-6) << c.label;
      EXPECT_LE(hi, b.max_upper + 1e-6) << c.label;
      // Pixel averages cannot reach the point maximum of thin texture peaks,
      // but the brightest region is several pixels wide.
      EXPECT_GT(hi, 0.5 * b.max_attained) << c.label;
    }
  }
}

}  // namespace
}  // namespace recofold
