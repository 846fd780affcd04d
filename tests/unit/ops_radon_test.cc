// SPDX-License-Identifier: Apache-2.0
// Tests of the CT geometry and the Joseph projector pair (adjoint, exact line integrals, validation).
#include <gtest/gtest.h>

#include <cmath>
#include <numeric>

#include "recofold/core/error.h"
#include "recofold/core/measurement.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/ops/joseph_projector.h"
#include "unit/ct_ellipse_phantom.h"

namespace recofold {
namespace {

std::vector<double> spaced_angles(int n, double arc_rad) {
  std::vector<double> a(static_cast<size_t>(n));
  for (int i = 0; i < n; ++i) a[static_cast<size_t>(i)] = arc_rad * i / n;
  return a;
}

CtGeometry parallel_geometry(Index ny, Index nx, int views, Index detectors) {
  CtGeometry g;
  g.ny = ny;
  g.nx = nx;
  g.pixel_size_mm = 1.0;
  g.angles_rad = spaced_angles(views, M_PI);
  g.detector_count = detectors;
  g.detector_spacing_mm = 1.0;
  return g;
}

CtGeometry fan_geometry(Index n, int views, Index detectors, FanDetector shape) {
  CtGeometry g;
  g.beam = CtBeam::kFan;
  g.fan_detector = shape;
  g.ny = n;
  g.nx = n;
  g.pixel_size_mm = 1.0;
  g.angles_rad = spaced_angles(views, 2.0 * M_PI);
  g.detector_count = detectors;
  g.source_to_isocenter_mm = 2.0 * n;
  g.source_to_detector_mm = 4.0 * n;
  g.detector_spacing_mm = 2.0;  // magnification 2: 1 mm at the isocentre
  return g;
}

TEST(JosephProjector, AdjointMatchesInnerProductIdentityParallel) {
  CtGeometry g = parallel_geometry(48, 61, 37, 80);
  g.detector_offset_mm = 0.3;
  JosephProjector a(g, 0.7);
  Rng rng(3);
  AdjointReport r = check_adjoint(a, rng, /*real_inputs=*/true);
  EXPECT_LT(r.relative_error, 1e-4) << r.to_string();
  Rng rng2(4);
  AdjointReport rc = check_adjoint(a, rng2, /*real_inputs=*/false);
  EXPECT_LT(rc.relative_error, 1e-4) << rc.to_string();
}

TEST(JosephProjector, AdjointMatchesInnerProductIdentityFan) {
  for (FanDetector shape : {FanDetector::kFlat, FanDetector::kEquiangular}) {
    JosephProjector a(fan_geometry(50, 45, 90, shape));
    Rng rng(5);
    AdjointReport r = check_adjoint(a, rng, /*real_inputs=*/true);
    EXPECT_LT(r.relative_error, 1e-4) << to_string(shape) << ": " << r.to_string();
  }
}

TEST(JosephProjector, TransposeDoesNotDependOnThreadCount) {
  JosephProjector a(fan_geometry(40, 30, 70, FanDetector::kFlat));
  std::vector<float> sino(static_cast<size_t>(a.range_size()));
  Rng rng(9);
  for (auto& s : sino) s = static_cast<float>(rng.normal());
  std::vector<float> one(static_cast<size_t>(a.domain_size())), two(one.size());
  a.back_project(sino.data(), one.data());
  a.back_project(sino.data(), two.data());
  EXPECT_EQ(one, two);
}

TEST(JosephProjector, ProjectsUniformImageToChordLength) {
  // A 64 x 64 image of ones with 0.5 mm pixels is a 32 mm square: the central
  // ray at 0 degrees crosses 32 mm of it, the diagonal at 45 degrees 32 sqrt(2).
  CtGeometry g = parallel_geometry(64, 64, 4, 65);
  g.pixel_size_mm = 0.5;
  g.detector_spacing_mm = 0.5;
  JosephProjector a(g);
  std::vector<float> img(64 * 64, 1.0f), sino(static_cast<size_t>(a.range_size()));
  a.project(img.data(), sino.data());
  EXPECT_NEAR(sino[32], 32.0, 1e-4);                        // view 0, centre detector
  EXPECT_NEAR(sino[65 + 32], 32.0 * std::sqrt(2.0), 0.05);  // view 1 = 45 degrees
  EXPECT_NEAR(sino[2 * 65 + 32], 32.0, 1e-4);               // 90 degrees
}

// Relative L2 difference of Joseph(raster) and the exact sinogram of the
// modified Shepp-Logan phantom (closed form, Kak & Slaney ch. 3).
double relative_error_vs_exact(const CtGeometry& g) {
  const auto es = testing::modified_shepp_logan();
  const ImageF img = testing::rasterise(es, g.ny, g.nx, 8);
  JosephProjector a(g);
  std::vector<float> sino(static_cast<size_t>(a.range_size()));
  a.project(img.data(), sino.data());
  const double half = 0.5 * g.nx * g.pixel_size_mm;  // mm per unit of the [-1,1] square
  double num = 0.0, den = 0.0;
  for (Index v = 0; v < g.view_count(); ++v)
    for (Index j = 0; j < g.detector_count; ++j) {
      const CtRay r = g.ray(v, j);
      const double exact =
          half * testing::ellipse_line_integral_points(es, r.ax / half, r.ay / half, r.bx / half, r.by / half);
      const double d = sino[static_cast<size_t>(v * g.detector_count + j)] - exact;
      num += d * d;
      den += exact * exact;
    }
  return std::sqrt(num / den);
}

TEST(JosephProjector, MatchesExactLineIntegralsOfHeadPhantomParallel) {
  const double err = relative_error_vs_exact(parallel_geometry(256, 256, 180, 256));
  EXPECT_LT(err, 0.02);
  RecordProperty("relative_l2", std::to_string(err));
}

TEST(JosephProjector, MatchesExactLineIntegralsOfHeadPhantomFan) {
  for (FanDetector shape : {FanDetector::kFlat, FanDetector::kEquiangular}) {
    const double err = relative_error_vs_exact(fan_geometry(256, 180, 256, shape));
    EXPECT_LT(err, 0.02) << to_string(shape);
  }
}

TEST(JosephProjector, ExactAlongAxisForParallelBeamDisk) {
  // Sanity check of the closed form itself against a brute-force chord: the
  // unit disk's integral at t is 2 sqrt(1 - t^2).
  const std::vector<testing::TestEllipse> disk{{1.0, 1.0, 1.0, 0, 0, 0}};
  EXPECT_NEAR(testing::ellipse_line_integral(disk, 0.3, 0.6), 1.6, 1e-12);
}

TEST(CtGeometry, ValidateListsEveryViolation) {
  CtGeometry g;
  g.beam = CtBeam::kFan;
  g.ny = g.nx = 100;
  g.detector_count = 0;
  g.source_to_isocenter_mm = 50;  // inside the 70.7 mm circle around the image
  g.source_to_detector_mm = 100;
  const auto errors = g.validate();
  ASSERT_EQ(errors.size(), 3u);
  EXPECT_NE(errors[0].find("0 views"), std::string::npos) << errors[0];
  EXPECT_NE(errors[1].find("detector_count"), std::string::npos) << errors[1];
  EXPECT_NE(errors[2].find("source_to_isocenter_mm"), std::string::npos) << errors[2];
}

TEST(JosephProjector, RejectsInvalidGeometryWithInputError) {
  CtGeometry g = parallel_geometry(16, 16, 0, 20);
  EXPECT_THROW(JosephProjector a(g), InputError);
}

TEST(CtGeometry, CoveredRadiusOfFanIsSourceDistanceTimesSineOfHalfFan) {
  CtGeometry g = fan_geometry(64, 8, 64, FanDetector::kEquiangular);
  const double gmax = g.fan_angle(63);
  EXPECT_NEAR(g.covered_radius_mm(), g.source_to_isocenter_mm * std::sin(gmax), 1e-9);
}

TEST(CtOperator, BuildsFromMeasurementWithMuScale) {
  Measurement m;
  m.modality = Modality::kCt;
  m.ny = m.nx = 32;
  CtData ct;
  ct.angles_rad = spaced_angles(10, M_PI);
  ct.detector_count = 46;
  ct.mu_per_mm = 0.05;
  ct.sinogram = NdArray<float>(Shape{10, 46});
  m.ct = ct;
  auto a = make_ct_operator(m, "m.h5");
  EXPECT_EQ(a->range_shape(), (Shape{10, 46}));
  EXPECT_DOUBLE_EQ(a->scale(), 0.05);
  m.ct->sinogram = NdArray<float>(Shape{10, 45});
  try {
    make_ct_operator(m, "m.h5");
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/ct/sinogram");
  }
}

}  // namespace
}  // namespace recofold
