// SPDX-License-Identifier: Apache-2.0
// Tests of certified value bounds: closed forms, brute force on dense grids, limits, the shipped tables.
#include <gtest/gtest.h>

#include <cmath>

#include "phantom_test_util.h"
#include "recofold/phantom/bounds.h"

namespace recofold {
namespace {

Component ellipse(double rho, double a, double b, double x0, double y0, double phi) {
  Component c;
  c.kind = ComponentKind::kEllipse;
  c.intensity = cdouble(rho, 0.0);
  c.a = a;
  c.b = b;
  c.x0 = x0;
  c.y0 = y0;
  c.phi_deg = phi;
  return c;
}

Component blob(double rho, double a, double b, double x0, double y0, double phi) {
  Component c = ellipse(rho, a, b, x0, y0, phi);
  c.kind = ComponentKind::kGaussian;
  return c;
}

Phantom of(std::vector<Component> comps) {
  Phantom p;
  p.name = "test";
  p.components = std::move(comps);
  return p;
}

// Extremes of the point values on an n x n grid over [-1, 1]^2 (brute force).
std::pair<double, double> grid_extremes(const Phantom& p, int n) {
  double lo = 1e300, hi = -1e300;
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < n; ++j) {
      const double v = phantom_value(p, -1.0 + 2.0 * (j + 0.5) / n, 1.0 - 2.0 * (i + 0.5) / n);
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
  return {lo, hi};
}

TEST(PhantomBounds, PointValueOfEllipseAndBlobMatchTheirFormulas) {
  const Phantom e = of({ellipse(0.7, 0.4, 0.2, 0.1, -0.1, 30.0)});
  EXPECT_EQ(phantom_value(e, 0.1, -0.1), 0.7);
  EXPECT_EQ(phantom_value(e, 0.9, 0.9), 0.0);
  const Phantom g = of({blob(2.0, 0.1, 0.05, 0.0, 0.0, 90.0)});
  // Rotated by 90 degrees: x is the blob's y' axis (sigma 0.05).
  EXPECT_NEAR(phantom_value(g, 0.05, 0.0), 2.0 * std::exp(-0.5), 1e-12);
  EXPECT_NEAR(phantom_value(g, 0.0, 0.1), 2.0 * std::exp(-0.5), 1e-12);
}

TEST(PhantomBounds, SingleEllipseIsEnclosedExactly) {
  const Phantom p = of({ellipse(0.7, 0.4, 0.2, 0.1, -0.1, 30.0)});
  const ValueBounds b = value_bounds(p);
  EXPECT_TRUE(b.min_resolved && b.max_resolved);
  EXPECT_EQ(b.max_attained, 0.7);
  EXPECT_LE(b.max_upper, 0.7 + 1e-3);
  EXPECT_EQ(b.min_attained, 0.0);
  EXPECT_GE(b.min_lower, -1e-3);
  EXPECT_LE(b.min_lower, 0.0);
}

TEST(PhantomBounds, BlobPeakAndCornerValueAreEnclosed) {
  // sup = rho at the centre; inf over the box = value at the farthest corner
  // (closed forms for a round blob).
  const double rho = 1.5, sigma = 0.3, x0 = 0.2, y0 = 0.1;
  const Phantom p = of({blob(rho, sigma, sigma, x0, y0, 0.0)});
  ValueBoundsOptions o;
  o.tolerance = 1e-6;
  const ValueBounds b = value_bounds(p, o);
  const double corner = rho * std::exp(-0.5 * ((1.0 + x0) * (1.0 + x0) + (1.0 + y0) * (1.0 + y0)) / (sigma * sigma));
  EXPECT_LE(b.max_attained, rho);
  EXPECT_GE(b.max_upper, rho);
  EXPECT_LE(b.max_upper - b.max_attained, 1e-6);
  EXPECT_LE(b.min_lower, corner);
  EXPECT_GE(b.min_attained, corner);
  EXPECT_LE(b.min_attained - b.min_lower, 1e-6);
}

TEST(PhantomBounds, EnclosureContainsDenseGridValuesOfRandomMixtures) {
  Rng rng(31);
  for (int trial = 0; trial < 12; ++trial) {
    std::vector<Component> comps;
    for (int k = 0; k < 6; ++k)
      comps.push_back(testing::random_component(rng, k % 2 ? ComponentKind::kGaussian : ComponentKind::kEllipse));
    const Phantom p = of(comps);
    ValueBoundsOptions o;
    o.tolerance = 1e-4;
    const ValueBounds b = value_bounds(p, o);
    const auto [lo, hi] = grid_extremes(p, 400);
    EXPECT_LE(b.min_lower, lo) << "trial " << trial;
    EXPECT_GE(b.max_upper, hi) << "trial " << trial;
    // Tight: the attained values are real values, and the grid comes close to them.
    EXPECT_NEAR(phantom_value(p, b.max_x, b.max_y), b.max_attained, 1e-12);
    EXPECT_NEAR(phantom_value(p, b.min_x, b.min_y), b.min_attained, 1e-12);
    EXPECT_GE(b.max_attained, hi - 0.05) << "trial " << trial;
    EXPECT_LE(b.min_attained, lo + 0.05) << "trial " << trial;
  }
}

TEST(PhantomBounds, FindsTheNegativeOverlapOfTwoEllipses) {
  // Two ellipses of -0.6 overlapping inside a support of 1: the overlap is
  // at -0.2, the kind of object the old families produced.
  const Phantom p = of({ellipse(1.0, 0.8, 0.8, 0, 0, 0), ellipse(-0.6, 0.3, 0.1, 0.0, 0.0, 0.0),
                        ellipse(-0.6, 0.1, 0.3, 0.0, 0.0, 0.0)});
  ValueBoundsOptions o;
  o.lower_limit = 0.0;
  const ValueBounds b = value_bounds(p, o);
  EXPECT_FALSE(b.certified_at_least(0.0));
  EXPECT_NEAR(b.min_attained, -0.2, 1e-12);
  EXPECT_LT(phantom_value(p, b.min_x, b.min_y), 0.0);
}

TEST(PhantomBounds, LimitsStopTheSearchWithACertificateOrACounterexample) {
  const Phantom p = of({blob(1.0, 0.05, 0.05, 0.3, 0.3, 0.0), blob(0.8, 0.05, 0.05, 0.36, 0.3, 0.0)});
  ValueBoundsOptions o;
  o.find_min = false;
  o.tolerance = 1e-12;
  o.upper_limit = 2.0;  // above the true maximum (about 1.57)
  const ValueBounds above = value_bounds(p, o);
  EXPECT_TRUE(above.max_resolved);
  EXPECT_TRUE(above.certified_at_most(2.0));
  o.upper_limit = 1.2;  // below it
  const ValueBounds below = value_bounds(p, o);
  EXPECT_TRUE(below.max_resolved);
  EXPECT_FALSE(below.certified_at_most(1.2));
  EXPECT_GT(below.max_attained, 1.2);
  o.upper_limit = std::numeric_limits<double>::infinity();
  o.tolerance = 1e-5;
  const ValueBounds exact = value_bounds(p, o);
  const auto [lo, hi] = grid_extremes(p, 2000);
  (void)lo;
  EXPECT_TRUE(exact.max_resolved);
  EXPECT_GE(exact.max_upper, hi);
  EXPECT_LE(exact.max_upper - exact.max_attained, 1e-5);
}

TEST(PhantomBounds, ShippedTablesAreNonNegativeWithTheDocumentedMaximum) {
  // The maxima are those stated in phantoms/README.md and README.md.
  struct Expect {
    const char* name;
    double max;
  };
  for (const Expect& e : {Expect{"shepp-logan", 2.0}, Expect{"shepp-logan-modified", 1.0}, Expect{"qc-disk", 2.0},
                          Expect{"organ-section", 1.33493}}) {
    const Phantom p = testing::load_repo_phantom(e.name);
    ValueBoundsOptions o;
    o.tolerance = 1e-5;
    o.max_cells = 1000000;
    const ValueBounds b = value_bounds(p, o);
    // shepp-logan-modified's ventricles are 1 - 0.8 - 0.2, -5.6e-17 in double
    // arithmetic: zero up to rounding.
    EXPECT_GE(b.min_lower, -1e-15) << e.name;
    EXPECT_NEAR(b.max_attained, e.max, 1e-4) << e.name;
    EXPECT_LE(b.max_upper - b.max_attained, 1e-5) << e.name;
  }
}

}  // namespace
}  // namespace recofold
