// SPDX-License-Identifier: Apache-2.0
// Tests of filtered back-projection: scaling, windows, fan-beam weighting, options.
#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <random>
#include <sstream>

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

// Independent double-precision reference for the filter design: the window
// formulas of fbp.h, a direct O(p^2) DFT of the band-limited ramp h, and the
// spatial kernel hw(n) (inverse DFT of the symmetric part of the response,
// halved: 1/4 (r_k + r_-k)).
double window_of(FbpFilter filter, Index k, Index p) {
  const double f = (k < p / 2 ? double(k) : double(k - p)) / double(p);
  const double shifted = double((k + p / 2) % p);
  switch (filter) {
    case FbpFilter::kRamLak:
      return 1.0;
    case FbpFilter::kSheppLogan:
      return k == 0 ? 1.0 : std::sin(M_PI * f) / (M_PI * f);
    case FbpFilter::kCosine:
      return std::sin(M_PI * shifted / double(p));
    case FbpFilter::kHamming:
      return 0.54 - 0.46 * std::cos(2.0 * M_PI * shifted / double(p - 1));
    case FbpFilter::kHann:
      return 0.5 - 0.5 * std::cos(2.0 * M_PI * shifted / double(p - 1));
  }
  return 1.0;
}

double ramp_tap(Index n) {  // Kak & Slaney's h(n) at unit spacing
  if (n == 0) return 0.25;
  return n % 2 == 0 ? 0.0 : -1.0 / (M_PI * M_PI * double(n) * double(n));
}

std::vector<double> direct_response(FbpFilter filter, Index p) {
  std::vector<double> r(static_cast<size_t>(p));
  for (Index k = 0; k < p; ++k) {
    std::complex<double> sum = 0.0;
    for (Index i = 0; i < p; ++i)
      sum += ramp_tap(std::min(i, p - i)) * std::polar(1.0, -2.0 * M_PI * double(k * i % p) / double(p));
    r[static_cast<size_t>(k)] = 2.0 * sum.real() * window_of(filter, k, p);
  }
  return r;
}

std::vector<double> direct_kernel(const std::vector<double>& r, Index lags) {
  const Index p = static_cast<Index>(r.size());
  std::vector<double> hw(static_cast<size_t>(lags));
  for (Index n = 0; n < lags; ++n) {
    double sum = 0.0;
    for (Index k = 0; k < p; ++k)
      sum += 0.25 * (r[static_cast<size_t>(k)] + r[static_cast<size_t>((p - k) % p)]) *
             std::cos(2.0 * M_PI * double(k * n % p) / double(p));
    hw[static_cast<size_t>(n)] = sum / double(p);
  }
  return hw;
}

TEST(FbpFilter, ResponseEqualsDirectDftOfTheWindowedRamp) {
  const Index p = 128;
  for (FbpFilter f :
       {FbpFilter::kRamLak, FbpFilter::kSheppLogan, FbpFilter::kCosine, FbpFilter::kHamming, FbpFilter::kHann}) {
    const auto got = fbp_frequency_response(f, p), want = direct_response(f, p);
    ASSERT_EQ(got.size(), want.size());
    for (Index k = 0; k < p; ++k)
      EXPECT_NEAR(got[static_cast<size_t>(k)], want[static_cast<size_t>(k)], 1e-12) << to_string(f) << " k=" << k;
  }
}

TEST(Fbp, FilteredViewsEqualDirectConvolutionWithTheKernel) {
  // Views at 0, pi, 0 on a grid matching the detector (1 mm pixels and
  // detectors, nx = nd): pixel ix reads detector ix (0) or nd - 1 - ix (pi)
  // with no interpolation, so every image row is pi / 3 x the sum of the
  // three filtered views. The first two share one complex transform, the
  // third is alone. Reference: direct O(nd^2) linear convolution in double.
  const Index nd = 121, views = 3;
  CtGeometry g = parallel_geometry(nd, 1, nd);
  g.angles_rad = {0.0, M_PI, 0.0};
  // Chords of disks (mostly low frequencies, where the ramp's response is
  // small and a rounding error in the design shows) plus a little noise.
  std::mt19937 rng(7);
  std::uniform_real_distribution<double> uni(-0.25, 0.25);
  std::vector<float> sino(static_cast<size_t>(views * nd));
  for (Index v = 0; v < views; ++v)
    for (Index j = 0; j < nd; ++j) {
      const double t = double(j - nd / 2) - 5.0 * double(v), r = 40.0 + 3.0 * double(v);
      sino[static_cast<size_t>(v * nd + j)] = static_cast<float>(2.0 * std::sqrt(std::max(0.0, r * r - t * t)) + uni(rng));
    }
  for (FbpFilter f : {FbpFilter::kRamLak, FbpFilter::kHann, FbpFilter::kSheppLogan}) {
    FbpOptions o;
    o.filter = f;
    o.zero_outside_circle = false;
    const ImageF img = fbp(g, sino.data(), o);
    const std::vector<double> hw = direct_kernel(direct_response(f, 256), nd);  // padded length 256 >= 2 nd
    if (f == FbpFilter::kRamLak) {  // the plain ramp's kernel is h itself (the response's 2 is halved)
      for (Index n = 0; n < nd; ++n) ASSERT_NEAR(hw[static_cast<size_t>(n)], ramp_tap(n), 1e-12) << n;
    }
    std::vector<double> q(static_cast<size_t>(views * nd), 0.0);
    for (Index v = 0; v < views; ++v)
      for (Index j = 0; j < nd; ++j)
        for (Index m = 0; m < nd; ++m)
          q[static_cast<size_t>(v * nd + j)] +=
              sino[static_cast<size_t>(v * nd + m)] * hw[static_cast<size_t>(std::abs(j - m))];
    double worst = 0.0, scale = 0.0;
    for (Index ix = 0; ix < nd; ++ix) {
      const double want = M_PI / 3.0 * (q[static_cast<size_t>(ix)] + q[static_cast<size_t>(nd + nd - 1 - ix)] +
                                        q[static_cast<size_t>(2 * nd + ix)]);
      scale = std::max(scale, std::abs(want));
      for (Index iy : {Index(0), nd / 2, nd - 1}) worst = std::max(worst, std::abs(img(iy, ix) - want));
    }
    // Single-precision transforms: ~1e-6 of the peak here (the ramp removes
    // most of the input's energy); a wrong order, pairing or scale is O(1).
    EXPECT_LT(worst, 3e-6 * scale) << to_string(f);
    std::ostringstream ratio;
    ratio << std::scientific << worst / scale;
    RecordProperty("relative_error_" + std::string(to_string(f)), ratio.str());
  }
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
  EXPECT_EQ(parse_fbp_filter("ramp"), FbpFilter::kRamLak);  // the common name
  EXPECT_EQ(to_string(*parse_fbp_filter("ramp")), "ram-lak");  // files keep one name
  EXPECT_FALSE(parse_fbp_filter("Ramp").has_value());
  EXPECT_FALSE(parse_fbp_filter("ram_lak").has_value());
}

}  // namespace
}  // namespace recofold
