// SPDX-License-Identifier: Apache-2.0
// Unit tests of the centred FFT, the masked multi-coil Fourier operator (SENSE) and coil maps.
#include <gtest/gtest.h>

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/fourier.h"

namespace recofold {
namespace {

NdArray<uint8_t> random_mask(Index ny, Index nx, double fraction, uint64_t seed) {
  Rng rng(seed);
  NdArray<uint8_t> m(Shape{ny, nx});
  for (auto& v : m.data) v = rng.uniform() < fraction ? 1 : 0;
  m.data[static_cast<size_t>((ny / 2) * nx + nx / 2)] = 1;
  return m;
}

VecC random_vec(Index n, uint64_t seed) {
  Rng rng(seed);
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(static_cast<float>(rng.normal()), static_cast<float>(rng.normal()));
  return v;
}

TEST(CenteredFft, AdjointMatchesInnerProductIdentityOnEvenAndOddSizes) {
  for (auto [ny, nx] : {std::pair<Index, Index>{16, 16}, {15, 21}, {32, 17}}) {
    CenteredFft f(ny, nx);
    Rng rng(3);
    const AdjointReport r = check_adjoint(f, rng);
    EXPECT_LT(r.relative_error, 1e-4) << ny << "x" << nx << ": " << r.to_string();
  }
}

TEST(CenteredFft, InverseUndoesForwardAndPreservesNorm) {
  for (auto [ny, nx] : {std::pair<Index, Index>{64, 64}, {33, 20}}) {
    const VecC x = random_vec(ny * nx, 5);
    VecC k(ny * nx), back(ny * nx);
    fft2c(x.data(), k.data(), ny, nx, FftDirection::kForward);
    fft2c(k.data(), back.data(), ny, nx, FftDirection::kInverse);
    EXPECT_LT((back - x).norm() / x.norm(), 1e-5);
    EXPECT_NEAR(k.norm() / x.norm(), 1.0, 1e-5);  // orthonormal: Parseval
  }
}

TEST(CenteredFft, ConstantImageMapsToCentreSample) {
  // A constant image of ones has all its energy at the DC sample, which the
  // centring puts at (ny/2, nx/2): value sqrt(ny nx).
  const Index ny = 12, nx = 9;
  ImageC one = ImageC::Constant(ny, nx, cfloat(1.0f, 0.0f));
  const ImageC k = fft2c(one);
  EXPECT_NEAR(std::abs(k(ny / 2, nx / 2)), std::sqrt(double(ny * nx)), 1e-4);
  EXPECT_NEAR(std::abs(k(0, 0)), 0.0, 1e-4);
}

TEST(CenteredFft, InPlaceTransformGivesTheSameResult) {
  const Index ny = 24, nx = 30;
  const VecC x = random_vec(ny * nx, 8);
  VecC a(ny * nx), b = x;
  fft2c(x.data(), a.data(), ny, nx, FftDirection::kForward);
  fft2c(b.data(), b.data(), ny, nx, FftDirection::kForward);
  EXPECT_LT((a - b).norm(), 1e-6 * a.norm());
}

TEST(MaskedFourier, AdjointMatchesInnerProductIdentityForOneFourAndEightCoils) {
  for (int coils : {1, 4, 8}) {
    const Index ny = 48, nx = 40;
    CoilArrayOptions o;
    o.coils = coils;
    MaskedFourier e(ny, nx, random_mask(ny, nx, 0.3, 11), synthetic_coil_maps(o, ny, nx));
    EXPECT_EQ(e.range_shape(), (Shape{coils, ny, nx}));
    Rng rng(17);
    const AdjointReport r = check_adjoint(e, rng);
    EXPECT_LT(r.relative_error, 1e-4) << coils << " coils: " << r.to_string();
  }
}

TEST(MaskedFourier, EqualsMaskTimesCentredFftOfCoilImageOnEvenAndOddGrids) {
  // Even grids take the checkerboard path, odd ones the shifted copies; both
  // must equal M ∘ fft2c(S_c ∘ x) (fft2c is checked against numpy).
  for (auto [ny, nx] : {std::pair<Index, Index>{16, 20}, {15, 21}, {18, 9}}) {
    for (int coils : {0, 3}) {  // 0: no coil maps
      const auto mask = random_mask(ny, nx, 0.5, 13);
      CoilArrayOptions o;
      o.coils = std::max(coils, 1);
      const NdArray<cfloat> maps = coils ? synthetic_coil_maps(o, ny, nx) : NdArray<cfloat>{};
      MaskedFourier e(ny, nx, mask, maps);
      const VecC x = random_vec(ny * nx, 14);
      VecC y;
      e.apply(x, y);
      const Index n = ny * nx, c_count = std::max(coils, 1);
      VecC ref(c_count * n), img(n);
      for (Index c = 0; c < c_count; ++c) {
        for (Index i = 0; i < n; ++i) img[i] = coils ? maps.data[size_t(c * n + i)] * x[i] : x[i];
        fft2c(img.data(), ref.data() + c * n, ny, nx, FftDirection::kForward);
        for (Index i = 0; i < n; ++i)
          if (!mask.data[size_t(i)]) ref[c * n + i] = cfloat(0.0f, 0.0f);
      }
      EXPECT_LT((y - ref).norm() / ref.norm(), 1e-5) << ny << "x" << nx << ", " << coils << " coils";
      VecC back, normal;
      e.adjoint(y, back);
      e.normal(x, normal);
      EXPECT_LT((back - normal).norm() / back.norm(), 1e-5) << ny << "x" << nx << ", " << coils << " coils";
    }
  }
}

TEST(MaskedFourier, AdjointHoldsWithoutCoilMapsOnOddGrid) {
  MaskedFourier e(31, 27, random_mask(31, 27, 0.4, 2));
  Rng rng(4);
  EXPECT_LT(check_adjoint(e, rng).relative_error, 1e-4);
}

TEST(MaskedFourier, FusedNormalEqualsAdjointOfApply) {
  for (int coils : {1, 4}) {
    const Index ny = 32, nx = 36;
    CoilArrayOptions o;
    o.coils = coils;
    MaskedFourier e(ny, nx, random_mask(ny, nx, 0.25, 21), synthetic_coil_maps(o, ny, nx));
    const VecC x = random_vec(ny * nx, 9);
    VecC y, ref, fused;
    e.apply(x, y);
    e.adjoint(y, ref);
    e.normal(x, fused);
    EXPECT_LT((fused - ref).norm() / ref.norm(), 1e-5) << coils << " coils";
  }
}

TEST(MaskedFourier, UnsampledPointsAreZeroInTheRange) {
  const Index ny = 16, nx = 16;
  const auto mask = random_mask(ny, nx, 0.5, 6);
  MaskedFourier e(ny, nx, mask);
  VecC y;
  e.apply(random_vec(ny * nx, 1), y);
  for (Index i = 0; i < ny * nx; ++i)
    if (!mask.data[static_cast<size_t>(i)]) {
      EXPECT_EQ(y[i], cfloat(0.0f, 0.0f));
    }
}

TEST(MaskedFourier, FullySampledWithNormalisedMapsIsAnIsometry) {
  const Index ny = 40, nx = 40;
  CoilArrayOptions o;
  o.coils = 8;
  MaskedFourier e(ny, nx, {}, synthetic_coil_maps(o, ny, nx));
  const VecC x = random_vec(ny * nx, 12);
  VecC n;
  e.normal(x, n);
  EXPECT_LT((n - x).norm() / x.norm(), 1e-5);
  EXPECT_NEAR(estimate_norm_squared(e, 20), 1.0, 1e-3);
}

TEST(MaskedFourier, MakeSenseOperatorRejectsMaskOfWrongShape) {
  MriData mri;
  mri.kspace = NdArray<cfloat>(Shape{1, 8, 8});
  mri.mask = NdArray<uint8_t>(Shape{8, 7}, 1);
  try {
    make_sense_operator(mri, "m.h5");
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/mri/mask");
    EXPECT_EQ(e.file(), "m.h5");
  }
}

TEST(CoilMaps, SumOfSquaresIsOneEverywhereForEveryCoilCount) {
  for (int coils : {1, 2, 8, 32}) {
    CoilArrayOptions o;
    o.coils = coils;
    const auto maps = synthetic_coil_maps(o, 20, 24);
    const Index n = 20 * 24;
    for (Index p = 0; p < n; p += 7) {
      double s = 0.0;
      for (int c = 0; c < coils; ++c) s += std::norm(maps.data[static_cast<size_t>(c * n + p)]);
      EXPECT_NEAR(s, 1.0, 1e-5) << coils << " coils, pixel " << p;
    }
  }
}

TEST(CoilMaps, CoilsAreStrongerNearTheirOwnSide) {
  CoilArrayOptions o;
  o.coils = 4;  // coil 0 on the right (+x), coil 2 on the left
  const auto right = coil_sensitivities_at(o, 0.8, 0.0);
  const auto left = coil_sensitivities_at(o, -0.8, 0.0);
  EXPECT_GT(std::abs(right[0]), std::abs(left[0]) * 1.5);
  EXPECT_GT(std::abs(left[2]), std::abs(right[2]) * 1.5);
}

TEST(CoilMaps, RejectsZeroAndTooManyCoils) {
  CoilArrayOptions o;
  o.coils = 0;
  EXPECT_FALSE(o.validate().empty());
  EXPECT_THROW(synthetic_coil_maps(o, 8, 8), InputError);
  o.coils = 33;
  EXPECT_FALSE(o.validate().empty());
}

TEST(CoilMaps, FindsTheCentredCalibrationBlock) {
  NdArray<uint8_t> m(Shape{64, 48});
  for (Index r = 22; r < 42; ++r)  // 20 centre rows (rows 22..41 around row 32)
    for (Index c = 0; c < 48; ++c) m.data[static_cast<size_t>(r * 48 + c)] = 1;
  for (Index r = 0; r < 64; r += 4)  // plus every fourth line
    for (Index c = 0; c < 48; ++c) m.data[static_cast<size_t>(r * 48 + c)] = 1;
  const CalibrationRegion reg = find_calibration_region(m);
  EXPECT_EQ(reg.rows, 20);
  EXPECT_EQ(reg.row0, 22);
  EXPECT_EQ(reg.cols, 48);
}

TEST(CoilMaps, EstimateFromCalibrationMatchesTrueMapsOnTheObject) {
  const Index ny = 64, nx = 64;
  CoilArrayOptions o;
  o.coils = 4;
  const auto maps = synthetic_coil_maps(o, ny, nx);
  // Object: a smooth disc of radius 0.6.
  VecC x(ny * nx);
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      const double px = -1 + (2.0 * ix + 1) / nx, py = 1 - (2.0 * iy + 1) / ny;
      const double r2 = (px * px + py * py) / 0.36;
      x[iy * nx + ix] = cfloat(static_cast<float>(r2 < 1 ? std::exp(-r2) : 0.0), 0.0f);
    }
  MaskedFourier e(ny, nx, {}, maps);
  VecC y;
  e.apply(x, y);
  NdArray<cfloat> k(Shape{4, ny, nx});
  std::copy(y.data(), y.data() + y.size(), k.data.begin());
  NdArray<uint8_t> mask(Shape{ny, nx}, 0);
  for (Index r = 24; r < 40; ++r)
    for (Index c = 0; c < nx; ++c) mask.data[static_cast<size_t>(r * nx + c)] = 1;
  const auto est = estimate_coil_maps(k, mask);
  // Compare |S| inside r < 0.4 (well inside the object); phase differs by the
  // object phase (zero here), so compare complex values.
  double err = 0.0, ref = 0.0;
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      const double px = -1 + (2.0 * ix + 1) / nx, py = 1 - (2.0 * iy + 1) / ny;
      if (px * px + py * py > 0.16) continue;
      for (int c = 0; c < 4; ++c) {
        const size_t i = static_cast<size_t>(c * ny * nx + iy * nx + ix);
        err += std::norm(std::complex<double>(est.data[i] - maps.data[i]));
        ref += std::norm(std::complex<double>(maps.data[i]));
      }
    }
  EXPECT_LT(std::sqrt(err / ref), 0.1);
}

}  // namespace
}  // namespace recofold
