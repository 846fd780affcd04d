// SPDX-License-Identifier: Apache-2.0
// PSNR, SSIM, NRMSE, HFEN: defining properties, closed-form cases, regions and rejected inputs.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/metrics/image_quality.h"

namespace recofold {
namespace {

ImageF textured(Index ny, Index nx, uint64_t seed) {
  Rng rng(seed);
  ImageF img(ny, nx);
  for (Index y = 0; y < ny; ++y)
    for (Index x = 0; x < nx; ++x)
      img(y, x) = static_cast<float>(std::sin(0.3 * x) * std::cos(0.2 * y) + 0.3 * rng.uniform());
  return img;
}

TEST(Metrics, IdenticalImagesScorePerfectly) {
  const ImageF a = textured(20, 24, 1);
  const Scores s = score_images(a, a);
  EXPECT_TRUE(std::isinf(s.psnr));
  EXPECT_NEAR(s.ssim, 1.0, 1e-12);
  EXPECT_EQ(s.nrmse, 0.0);
  EXPECT_EQ(s.hfen, 0.0);
  EXPECT_NEAR(s.data_range, a.maxCoeff() - a.minCoeff(), 1e-7);
}

TEST(Metrics, PsnrAndNrmseMatchClosedFormForAConstantOffset) {
  ImageF ref = ImageF::Zero(16, 16);
  ref(3, 4) = 2.0f;  // data range 2
  const ImageF img = ref + 0.125f;
  // The offset is exact in binary: MSE = 0.125^2, PSNR = 10 log10(4 / 0.125^2).
  const double d = 0.125;
  EXPECT_NEAR(psnr(ref, img), 10 * std::log10(4.0 / (d * d)), 1e-9);
  EXPECT_NEAR(nrmse(ref, img), std::sqrt(256 * d * d / 4.0), 1e-9);
  ScoreOptions o;
  o.data_range = 1.0;
  EXPECT_NEAR(psnr(ref, img, o), 10 * std::log10(1.0 / (d * d)), 1e-9);
}

TEST(Metrics, SsimOfAConstantOffsetMatchesTheLuminanceTerm) {
  // With image = reference + c and a constant reference m, the variances vanish and
  // SSIM = (2 m (m + c) + C1) / (m^2 + (m + c)^2 + C1) everywhere.
  const ImageF ref = ImageF::Constant(15, 17, 1.0f);
  const ImageF img = ImageF::Constant(15, 17, 1.5f);
  ScoreOptions o;
  o.data_range = 2.0;
  const double c1 = (0.01 * 2) * (0.01 * 2);
  EXPECT_NEAR(ssim(ref, img, o), (2 * 1.0 * 1.5 + c1) / (1.0 + 2.25 + c1), 1e-12);
}

TEST(Metrics, SsimIsSymmetricAndBelowOneForDifferentImages) {
  const ImageF a = textured(23, 31, 2);
  const ImageF b = textured(23, 31, 3);
  ScoreOptions o;
  o.data_range = 2.5;
  EXPECT_NEAR(ssim(a, b, o), ssim(b, a, o), 1e-12);
  EXPECT_LT(ssim(a, b, o), 0.99);
  const ImageD map = ssim_map(a, b, 2.5);
  EXPECT_TRUE(std::isnan(map(0, 0)));
  EXPECT_TRUE(std::isnan(map(4, 10)));
  EXPECT_FALSE(std::isnan(map(5, 5)));
  EXPECT_FALSE(std::isnan(map(17, 25)));
  EXPECT_TRUE(std::isnan(map(18, 25)));
}

TEST(Metrics, RegionRestrictsEveryMetricToItsPixels) {
  const ImageF ref = textured(24, 24, 4);
  ImageF img = ref;
  img.block(0, 0, 24, 12) += 0.5f;  // only the left half differs
  ScoreOptions right;
  right.region = ImageF::Zero(24, 24);
  right.region.block(0, 12, 24, 12) = 1.0f;
  EXPECT_TRUE(std::isinf(psnr(ref, img, right)));
  EXPECT_EQ(nrmse(ref, img, right), 0.0);
  ScoreOptions left;
  left.region = ImageF::Zero(24, 24);
  left.region.block(0, 0, 24, 6) = 1.0f;
  EXPECT_NEAR(psnr(ref, img, left), 10 * std::log10(std::pow(ref.maxCoeff() - ref.minCoeff(), 2) / 0.25), 1e-5);
  EXPECT_GT(hfen(ref, img, left), 0.0);
  // The region on the right, away from the step, sees almost no LoG response.
  ScoreOptions far_right;
  far_right.region = ImageF::Zero(24, 24);
  far_right.region.block(0, 20, 24, 4) = 1.0f;
  EXPECT_LT(hfen(ref, img, far_right), 1e-6);
}

TEST(Metrics, HfenKernelIsZeroSumSymmetricAndIgnoresConstants) {
  const ImageD h = hfen_kernel();
  ASSERT_EQ(h.rows(), 15);
  ASSERT_EQ(h.cols(), 15);
  EXPECT_NEAR(h.sum(), 0.0, 1e-12);
  EXPECT_LT(h(7, 7), 0.0);  // negative centre
  EXPECT_DOUBLE_EQ(h(2, 5), h(5, 2));
  EXPECT_DOUBLE_EQ(h(0, 3), h(14, 11));
  // HFEN is blind to a constant offset (zero-sum kernel, mirrored edges).
  const ImageF ref = textured(18, 20, 5);
  EXPECT_LT(hfen(ref, ref + 0.7f), 1e-6);
  // ...and grows with added detail.
  const ImageF noise = textured(18, 20, 6) - textured(18, 20, 7);
  EXPECT_LT(hfen(ref, ref + 0.05f * noise), hfen(ref, ref + 0.2f * noise));
}

TEST(Metrics, RejectsMismatchedShapesTinyImagesNonFiniteValuesAndEmptyRegions) {
  const ImageF a = textured(12, 12, 8);
  auto field_of = [](auto&& fn) {
    try {
      fn();
    } catch (const InputError& e) {
      return e.field();
    }
    return std::string("no error");
  };
  EXPECT_EQ(field_of([&] { score_images(a, textured(12, 13, 8)); }), "image");
  EXPECT_EQ(field_of([&] { ssim(textured(8, 30, 1), textured(8, 30, 2)); }), "image");
  ImageF nan = a;
  nan(2, 2) = std::numeric_limits<float>::quiet_NaN();
  EXPECT_EQ(field_of([&] { psnr(a, nan); }), "image");
  EXPECT_EQ(field_of([&] { psnr(nan, a); }), "reference");
  ScoreOptions empty;
  empty.region = ImageF::Zero(12, 12);
  EXPECT_EQ(field_of([&] { nrmse(a, a, empty); }), "region");
  ScoreOptions wrong;
  wrong.region = ImageF::Ones(3, 3);
  EXPECT_EQ(field_of([&] { nrmse(a, a, wrong); }), "region");
  EXPECT_EQ(field_of([&] { psnr(ImageF::Ones(12, 12), a); }), "reference");  // constant: no data range
}

TEST(Metrics, MagnitudeOfComplexImage) {
  ImageC z(1, 2);
  z << cfloat(3, 4), cfloat(-1, 0);
  const ImageF m = magnitude(z);
  EXPECT_FLOAT_EQ(m(0, 0), 5.f);
  EXPECT_FLOAT_EQ(m(0, 1), 1.f);
}

}  // namespace
}  // namespace recofold
