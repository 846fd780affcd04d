// SPDX-License-Identifier: Apache-2.0
// Tests of filtered back-projection: scaling, windows, fan-beam weighting, options.
#include <gtest/gtest.h>

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/recon/fbp.h"
#include "unit/ct_ellipse_phantom.h"

namespace recofold {
namespace {

CtGeometry parallel_geometry(Index n, int views, Index detectors) {
  CtGeometry g;
  g.ny = g.nx = n;
  g.pixel_size_mm = 1.0;
  for (int i = 0; i < views; ++i) g.angles_rad.push_back(M_PI * i / views);
  g.detector_count = detectors;
  g.detector_spacing_mm = 1.0;
  return g;
}

CtGeometry fan_geometry(Index n, int views, Index detectors, FanDetector shape) {
  CtGeometry g;
  g.beam = CtBeam::kFan;
  g.fan_detector = shape;
  g.ny = g.nx = n;
  g.pixel_size_mm = 1.0;
  for (int i = 0; i < views; ++i) g.angles_rad.push_back(2.0 * M_PI * i / views);
  g.detector_count = detectors;
  g.source_to_isocenter_mm = 2.0 * n;
  g.source_to_detector_mm = 4.0 * n;
  g.detector_spacing_mm = 2.0;  // 1 mm at the isocentre
  return g;
}

// Exact sinogram (closed form, Kak & Slaney ch. 3) of ellipses on the [-1,1]
// square mapped onto the geometry's grid, times `mu`.
std::vector<float> exact_sinogram(const CtGeometry& g, const std::vector<testing::TestEllipse>& es, double mu = 1.0) {
  const double half = 0.5 * g.nx * g.pixel_size_mm;
  std::vector<float> s(static_cast<size_t>(g.view_count() * g.detector_count));
  for (Index v = 0; v < g.view_count(); ++v)
    for (Index j = 0; j < g.detector_count; ++j) {
      const CtRay r = g.ray(v, j);
      s[static_cast<size_t>(v * g.detector_count + j)] = static_cast<float>(
          mu * half * testing::ellipse_line_integral_points(es, r.ax / half, r.ay / half, r.bx / half, r.by / half));
    }
  return s;
}

double centre_mean(const ImageF& img) {
  const Index cy = img.rows() / 2, cx = img.cols() / 2;
  return img.block(cy - 3, cx - 3, 6, 6).cast<double>().mean();
}

double psnr(const ImageF& x, const ImageF& ref) {
  const double range = ref.maxCoeff() - ref.minCoeff();
  const double mse = (x.cast<double>() - ref.cast<double>()).square().mean();
  return 10.0 * std::log10(range * range / mse);
}

TEST(Fbp, UniformDiskReconstructsToItsIntensityWithEveryFilter) {
  const std::vector<testing::TestEllipse> disk{{1.0, 0.8, 0.8, 0, 0, 0}};
  const CtGeometry g = parallel_geometry(128, 180, 183);
  const auto sino = exact_sinogram(g, disk);
  for (FbpFilter f :
       {FbpFilter::kRamLak, FbpFilter::kSheppLogan, FbpFilter::kCosine, FbpFilter::kHamming, FbpFilter::kHann}) {
    FbpOptions o;
    o.filter = f;
    const ImageF img = fbp(g, sino.data(), o);
    EXPECT_NEAR(centre_mean(img), 1.0, 0.02) << to_string(f);
    RecordProperty(std::string(to_string(f)), std::to_string(centre_mean(img)));
  }
}

TEST(Fbp, DividesByAttenuationToGiveIntensityUnits) {
  const std::vector<testing::TestEllipse> disk{{0.5, 0.7, 0.6, 0.1, 0, 20}};
  const CtGeometry g = parallel_geometry(96, 120, 137);
  FbpOptions o;
  o.attenuation_per_mm = 0.02;
  const ImageF img = fbp(g, exact_sinogram(g, disk, 0.02).data(), o);
  EXPECT_NEAR(img(48, 48), 0.5, 0.01);
  EXPECT_NEAR(img(5, 48), 0.0, 0.01);
}

TEST(Fbp, FanBeamUniformDiskReconstructsToItsIntensity) {
  const std::vector<testing::TestEllipse> disk{{1.0, 0.8, 0.8, 0, 0, 0}};
  for (FanDetector shape : {FanDetector::kFlat, FanDetector::kEquiangular}) {
    const CtGeometry g = fan_geometry(128, 360, 183, shape);
    const ImageF img = fbp(g, exact_sinogram(g, disk).data(), FbpOptions{});
    EXPECT_NEAR(centre_mean(img), 1.0, 0.02) << to_string(shape);
    RecordProperty("fan_" + std::string(to_string(shape)), std::to_string(centre_mean(img)));
  }
}

TEST(Fbp, FanBeamPsnrWithinOneDbOfParallelAtMatchedSampling) {
  // Parallel: 180 views over 180 degrees; fan: 360 views over 360 degrees
  // (the same angular density of lines), both with 1 mm detector sampling at
  // the isocentre and the same Hann-windowed ramp.
  const auto es = testing::modified_shepp_logan();
  const Index n = 128;
  const ImageF ref = testing::rasterise(es, n, n, 4);
  FbpOptions o;
  o.filter = FbpFilter::kHann;
  o.zero_outside_circle = false;
  const CtGeometry gp = parallel_geometry(n, 180, 183);
  const double p_par = psnr(fbp(gp, exact_sinogram(gp, es).data(), o), ref);
  for (FanDetector shape : {FanDetector::kFlat, FanDetector::kEquiangular}) {
    const CtGeometry gf = fan_geometry(n, 360, 183, shape);
    const double p_fan = psnr(fbp(gf, exact_sinogram(gf, es).data(), o), ref);
    EXPECT_NEAR(p_fan, p_par, 1.0) << to_string(shape);
    RecordProperty("psnr_fan_" + std::string(to_string(shape)), std::to_string(p_fan));
    EXPECT_GT(p_fan, 20.0) << to_string(shape);
  }
  EXPECT_GT(p_par, 20.0);
  RecordProperty("psnr_parallel", std::to_string(p_par));
}

TEST(Fbp, RamLakResponseFollowsTheRampAtLowFrequencies) {
  // 2 Re(DFT(h)) of the band-limited ramp approximates 2 |f| (skimage's scale).
  const Index p = 512;
  const auto r = fbp_frequency_response(FbpFilter::kRamLak, p);
  for (Index k = 1; k <= p / 4; ++k) EXPECT_NEAR(r[static_cast<size_t>(k)], 2.0 * k / p, 0.01) << k;
  EXPECT_NEAR(r[static_cast<size_t>(p / 2)], 1.0, 0.01);
  // Windows damp the highest frequency: Hann goes to zero at Nyquist.
  const auto hann = fbp_frequency_response(FbpFilter::kHann, p);
  EXPECT_LT(std::abs(hann[static_cast<size_t>(p / 2)]), 1e-3);
}

TEST(FbpOptions, ValidateReportsEveryViolation) {
  FbpOptions o;
  o.padding_factor = 1;
  o.attenuation_per_mm = 0.0;
  EXPECT_EQ(o.validate().size(), 2u);
  const CtGeometry g = parallel_geometry(16, 4, 23);
  std::vector<float> s(4 * 23, 0.0f);
  EXPECT_THROW(fbp(g, s.data(), o), InputError);
}

TEST(FbpFilter, ParsesEveryNameItPrints) {
  for (FbpFilter f :
       {FbpFilter::kRamLak, FbpFilter::kSheppLogan, FbpFilter::kCosine, FbpFilter::kHamming, FbpFilter::kHann})
    EXPECT_EQ(parse_fbp_filter(to_string(f)), f);
  EXPECT_FALSE(parse_fbp_filter("ramp").has_value());
}

}  // namespace
}  // namespace recofold
