// SPDX-License-Identifier: Apache-2.0
// Unit tests of the periodised orthogonal wavelet transform and the cycle-spinning shift.
#include <gtest/gtest.h>

#include <cmath>
#include <numeric>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/wavelet.h"

namespace recofold {
namespace {

VecC random_image(Index n, uint64_t seed) {
  Rng rng(seed);
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(float(rng.normal()), float(rng.normal()));
  return v;
}

TEST(WaveletFilters, AreOrthonormalWithUnitDcGain) {
  for (auto fam : {WaveletFamily::kDb1, WaveletFamily::kDb2, WaveletFamily::kDb3, WaveletFamily::kDb4}) {
    const std::vector<double> h = wavelet_lowpass(fam);
    EXPECT_NEAR(std::accumulate(h.begin(), h.end(), 0.0), std::sqrt(2.0), 1e-12) << to_string(fam);
    // sum_j h[j] h[j + 2m] = delta(m): orthogonality of even shifts.
    for (size_t m = 0; 2 * m < h.size(); ++m) {
      double s = 0.0;
      for (size_t j = 0; j + 2 * m < h.size(); ++j) s += h[j] * h[j + 2 * m];
      EXPECT_NEAR(s, m == 0 ? 1.0 : 0.0, 1e-12) << to_string(fam) << " shift " << 2 * m;
    }
  }
}

TEST(WaveletTransform, ReconstructsPerfectlyAndPreservesNorm) {
  for (auto fam : {WaveletFamily::kDb1, WaveletFamily::kDb2, WaveletFamily::kDb3, WaveletFamily::kDb4}) {
    for (int levels = 1; levels <= 4; ++levels) {
      for (auto shape : {Shape{32, 32}, Shape{64, 48}, Shape{16, 80}}) {
        WaveletTransform w(shape, fam, levels);
        const VecC x = random_image(shape.size(), 11 + levels);
        VecC c, back;
        w.apply(x, c);
        w.adjoint(c, back);
        EXPECT_LT((back - x).norm() / x.norm(), 1e-6) << w.name();
        EXPECT_NEAR(c.norm() / x.norm(), 1.0, 1e-6) << w.name();
      }
    }
  }
}

TEST(WaveletTransform, PassesAdjointTest) {
  WaveletTransform w(Shape{32, 48}, WaveletFamily::kDb3, 3);
  Rng rng(5);
  const AdjointReport r = check_adjoint(w, rng);
  EXPECT_LT(r.relative_error, 1e-5) << r.to_string();
}

TEST(WaveletTransform, ConstantImageHasOnlyApproximationCoefficients) {
  const Shape shape{32, 64};
  WaveletTransform w(shape, WaveletFamily::kDb4, 3);
  VecC x = VecC::Constant(shape.size(), cfloat(2.f, -1.f));
  VecC c;
  w.apply(x, c);
  const std::vector<int> band = w.band_index();
  double detail = 0.0, approx = 0.0;
  for (Index i = 0; i < c.size(); ++i) (band[size_t(i)] == 0 ? approx : detail) += std::norm(c[i]);
  EXPECT_LT(detail, 1e-8 * approx);
  EXPECT_NEAR(approx, x.squaredNorm(), 1e-3 * x.squaredNorm());
}

TEST(WaveletTransform, SubBandsTileTheCoefficientImage) {
  WaveletTransform w(Shape{64, 32}, WaveletFamily::kDb2, 4);
  const std::vector<SubBand> bands = w.sub_bands();
  ASSERT_EQ(bands.size(), 1u + 3u * 4u);
  Index covered = 0;
  for (const SubBand& b : bands) covered += b.rows * b.cols;
  EXPECT_EQ(covered, 64 * 32);
  const std::vector<int> idx = w.band_index();
  EXPECT_EQ(idx[0], 0);
  EXPECT_EQ(idx[size_t(63 * 32 + 31)], static_cast<int>(bands.size()) - 1);  // finest diagonal
  EXPECT_EQ(bands.back().orientation, SubBandOrientation::kHighHigh);
  EXPECT_EQ(bands.back().level, 1);
}

TEST(WaveletTransform, RejectsSizesNotDivisibleByTwoToTheLevels) {
  EXPECT_THROW(WaveletTransform(Shape{48, 40}, WaveletFamily::kDb2, 4), InputError);
  EXPECT_THROW(WaveletTransform(Shape{32, 32}, WaveletFamily::kDb2, 0), InputError);
}

TEST(WaveletNames, ParseAndPrintRoundTrip) {
  for (auto fam : {WaveletFamily::kDb1, WaveletFamily::kDb2, WaveletFamily::kDb3, WaveletFamily::kDb4})
    EXPECT_EQ(parse_wavelet(to_string(fam)), fam);
  EXPECT_EQ(parse_wavelet("haar"), WaveletFamily::kDb1);
  EXPECT_FALSE(parse_wavelet("db5").has_value());
}

TEST(CircularShift, ShiftsAndShiftsBack) {
  const Shape shape{6, 10};
  const VecC x = random_image(shape.size(), 3);
  VecC s, back;
  circular_shift(x, shape, 2, -3, s);
  EXPECT_EQ(s[2 * 10 + 7], x[0]);  // (0,0) moves to (2, -3 mod 10 = 7)
  circular_shift(s, shape, -2, 3, back);
  EXPECT_EQ((back - x).norm(), 0.f);
}

}  // namespace
}  // namespace recofold
