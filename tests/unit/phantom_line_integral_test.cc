// SPDX-License-Identifier: Apache-2.0
// Tests of exact line integrals: brute-force quadrature along rays, Kak-Slaney form, fan rays, phase.
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>

#include "phantom_test_util.h"
#include "recofold/phantom/line_integral.h"

namespace recofold {
namespace {

constexpr double kPi = 3.14159265358979323846;

// Point value of one component at (x, y), written out from the definition in
// phantom.h (independent of the evaluators under test).
double component_value(const Component& c, double x, double y) {
  const double phi = c.phi_deg * kPi / 180.0;
  const double px = x - c.x0, py = y - c.y0;
  const double u = (std::cos(phi) * px + std::sin(phi) * py) / c.a;
  const double v = (-std::sin(phi) * px + std::cos(phi) * py) / c.b;
  if (c.kind == ComponentKind::kEllipse) return u * u + v * v < 1.0 ? c.intensity.real() : 0.0;
  return c.intensity.real() * std::exp(-0.5 * (u * u + v * v));
}

// Brute-force integral along {t n + s d}, s in [-2, 2]: midpoint rule with
// 4e6 steps (step 1e-6; the ellipse indicator's jumps cost at most one step
// each, so chords of length >= 0.05 come out within ~4e-5 relative).
double brute_force_ray(const Component& c, double theta, double t) {
  const double nx = std::cos(theta), ny = std::sin(theta);
  const int steps = 4000000;
  const double h = 4.0 / steps;
  double sum = 0.0;
  for (int i = 0; i < steps; ++i) {
    const double s = -2.0 + (i + 0.5) * h;
    sum += component_value(c, t * nx - s * ny, t * ny + s * nx);
  }
  return sum * h;
}

void check_random_rays(ComponentKind kind, uint64_t seed) {
  Rng rng(seed);
  int checked = 0, hits = 0;
  double worst = 0.0;
  while (checked < 50) {
    const Component c = testing::random_component(rng, kind);
    const double theta = rng.uniform(0.0, kPi);
    // Offsets mostly through the component: t = c.n + U(-0.9, 0.9) x extent.
    const double extent = std::max(c.a, c.b) * (kind == ComponentKind::kEllipse ? 1.0 : 3.0);
    const double t = c.x0 * std::cos(theta) + c.y0 * std::sin(theta) + rng.uniform(-0.9, 0.9) * extent;
    const double exact = line_integral(testing::single(c), theta, t).real();
    const double brute = brute_force_ray(c, theta, t);
    if (kind == ComponentKind::kEllipse && std::abs(brute) < 0.05 * std::abs(c.intensity.real())) {
      // A miss or a short chord: the brute-force rule is too coarse for a
      // relative check there; it must still agree absolutely.
      EXPECT_NEAR(exact, brute, 4e-6 * std::abs(c.intensity.real()));
      continue;
    }
    ++hits;
    const double rel = std::abs(exact - brute) / std::abs(brute);
    worst = std::max(worst, rel);
    EXPECT_LT(rel, 1e-4) << "theta " << theta << " t " << t << " exact " << exact << " brute " << brute;
    ++checked;
  }
  EXPECT_EQ(hits, 50);
  std::cout << to_string(kind) << ": worst relative error over 50 rays " << worst << "\n";
}

TEST(PhantomLineIntegral, EllipseMatchesBruteForceQuadratureOn50RandomRays) {
  check_random_rays(ComponentKind::kEllipse, 11);
}

TEST(PhantomLineIntegral, BlobMatchesBruteForceQuadratureOn50RandomRays) {
  check_random_rays(ComponentKind::kGaussian, 12);
}

TEST(PhantomLineIntegral, EllipseMatchesKakSlaneyClosedForm) {
  // Kak & Slaney (1988), ch. 3 (DEVELOPERS.md "Sources", from memory): a centred,
  // unrotated ellipse gives 2 rho a b / alpha^2 sqrt(alpha^2 - t^2) with
  // alpha^2 = a^2 cos^2 theta + b^2 sin^2 theta; shift t -> t - (x0 cos + y0 sin)
  // and rotation theta -> theta - phi.
  Rng rng(3);
  for (int i = 0; i < 200; ++i) {
    const Component c = testing::random_component(rng, ComponentKind::kEllipse);
    const double theta = rng.uniform(-kPi, kPi), t = rng.uniform(-0.8, 0.8);
    const double th = theta - c.phi_deg * kPi / 180.0;
    const double tt = t - (c.x0 * std::cos(theta) + c.y0 * std::sin(theta));
    const double alpha2 = c.a * c.a * std::cos(th) * std::cos(th) + c.b * c.b * std::sin(th) * std::sin(th);
    const double ks = tt * tt < alpha2 ? 2.0 * c.intensity.real() * c.a * c.b / alpha2 * std::sqrt(alpha2 - tt * tt) : 0.0;
    EXPECT_NEAR(line_integral(testing::single(c), theta, t).real(), ks, 1e-12);
  }
}

TEST(PhantomLineIntegral, BlobMatchesReferenceClosedForm) {
  // DEVELOPERS.md "Sources" (from memory): sqrt(2 pi) rho sx sy / s exp(-t'^2 / 2 s^2),
  // s^2 = sx^2 cos^2(theta - phi) + sy^2 sin^2(theta - phi).
  Rng rng(4);
  for (int i = 0; i < 200; ++i) {
    const Component c = testing::random_component(rng, ComponentKind::kGaussian);
    const double theta = rng.uniform(-kPi, kPi), t = rng.uniform(-0.5, 0.5);
    const double th = theta - c.phi_deg * kPi / 180.0;
    const double tt = t - (c.x0 * std::cos(theta) + c.y0 * std::sin(theta));
    const double s2 = c.a * c.a * std::cos(th) * std::cos(th) + c.b * c.b * std::sin(th) * std::sin(th);
    const double ref = std::sqrt(2.0 * kPi) * c.intensity.real() * c.a * c.b / std::sqrt(s2) * std::exp(-tt * tt / (2.0 * s2));
    EXPECT_NEAR(line_integral(testing::single(c), theta, t).real(), ref, 1e-12);
  }
}

TEST(PhantomLineIntegral, FanRayEqualsParallelRayOfTheSameLine) {
  const Phantom p = testing::load_repo_phantom("shepp-logan");
  Rng rng(9);
  std::vector<LineThrough> rays;
  for (int i = 0; i < 100; ++i) {
    const double beta = rng.uniform(0.0, 2.0 * kPi);
    const double sx = 3.0 * std::cos(beta), sy = 3.0 * std::sin(beta);  // source on a circle
    const double dx = rng.uniform(-0.9, 0.9), dy = rng.uniform(-0.9, 0.9);
    rays.push_back({sx, sy, dx, dy});
  }
  const Eigen::VectorXcd fan = line_integrals_through(p, rays);
  for (size_t i = 0; i < rays.size(); ++i) {
    const LineThrough& r = rays[i];
    // The same line as a parallel ray: d = (D - S)/|D - S| = (-sin th, cos th).
    const double len = std::hypot(r.x2 - r.x1, r.y2 - r.y1);
    const double theta = std::atan2(-(r.x2 - r.x1) / len, (r.y2 - r.y1) / len);
    const double t = r.x1 * std::cos(theta) + r.y1 * std::sin(theta);
    EXPECT_NEAR(std::abs(fan[static_cast<Index>(i)] - line_integral(p, theta, t)), 0.0, 1e-12);
    // Swapping the two points gives the same line.
    EXPECT_NEAR(std::abs(line_integral_through(p, r.x2, r.y2, r.x1, r.y1) - fan[static_cast<Index>(i)]), 0.0, 1e-12);
  }
}

TEST(PhantomLineIntegral, RayConventionAtZeroDegreesIntegratesAlongY) {
  // A small disc at (0.5, 0): the theta = 0 ray at t = 0.5 (the line x = 0.5)
  // crosses it; at theta = pi/2 the t axis is y, so t = 0.5 misses it.
  Component c;
  c.a = c.b = 0.1;
  c.x0 = 0.5;
  const Phantom p = testing::single(c);
  EXPECT_NEAR(line_integral(p, 0.0, 0.5).real(), 0.2, 1e-12);
  EXPECT_EQ(line_integral(p, kPi / 2, 0.5).real(), 0.0);
  EXPECT_NEAR(line_integral(p, kPi / 2, 0.0).real(), 0.2, 1e-12);
}

TEST(PhantomLineIntegral, GlobalPhaseIsIntegratedExactly) {
  // Brute force of f(x) exp(i (phase0 + 2 pi g.x)) along random rays.
  Rng rng(21);
  for (int trial = 0; trial < 6; ++trial) {
    const ComponentKind kind = trial % 2 == 0 ? ComponentKind::kEllipse : ComponentKind::kGaussian;
    Component c = testing::random_component(rng, kind);
    Phantom p = testing::single(c);
    p.phase0_rad = rng.uniform(-3.0, 3.0);
    p.phase_gx = rng.uniform(-2.0, 2.0);
    p.phase_gy = rng.uniform(-2.0, 2.0);
    const double theta = rng.uniform(0.0, kPi);
    const double t = c.x0 * std::cos(theta) + c.y0 * std::sin(theta) + rng.uniform(-0.3, 0.3) * std::min(c.a, c.b);
    const double nx = std::cos(theta), ny = std::sin(theta);
    const int steps = 2000000;
    const double h = 4.0 / steps;
    cdouble sum = 0.0;
    double magnitude = 0.0;  // integral of |f|: the scale errors are judged against
    for (int i = 0; i < steps; ++i) {
      const double s = -2.0 + (i + 0.5) * h;
      const double x = t * nx - s * ny, y = t * ny + s * nx;
      const double f = component_value(c, x, y);
      sum += f * std::polar(1.0, p.phase0_rad + 2.0 * kPi * (p.phase_gx * x + p.phase_gy * y));
      magnitude += std::abs(f);
    }
    sum *= h;
    magnitude *= h;
    const cdouble exact = line_integral(p, theta, t);
    // The oscillating phase can cancel most of the integral, so the error is
    // measured against the integral of |f| (the brute-force rule's own scale).
    EXPECT_LT(std::abs(exact - sum) / magnitude, 1e-4) << "trial " << trial;
  }
}

TEST(PhantomLineIntegral, SinogramHoldsRealPartsInViewDetectorOrder) {
  const Phantom p = testing::load_repo_phantom("qc-disk");
  const std::vector<double> angles = {0.0, 0.3, 1.2, 2.9};
  const std::vector<double> offsets = {-0.9, -0.2, 0.0, 0.45, 0.8};
  const ImageD s = parallel_sinogram(p, angles, offsets);
  ASSERT_EQ(s.rows(), 4);
  ASSERT_EQ(s.cols(), 5);
  for (int i = 0; i < 4; ++i)
    for (int j = 0; j < 5; ++j) EXPECT_EQ(s(i, j), line_integral(p, angles[i], offsets[j]).real());
}

}  // namespace
}  // namespace recofold
