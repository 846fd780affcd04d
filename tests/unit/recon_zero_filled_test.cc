// SPDX-License-Identifier: Apache-2.0
// Unit tests of the zero-filled MRI reconstruction and its coil combinations.
#include <gtest/gtest.h>

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/fourier.h"
#include "recofold/recon/zero_filled.h"

namespace recofold {
namespace {

// Fully sampled, noiseless data E x of a random complex image x.
MriData simulate(Index ny, Index nx, int coils, const VecC& x) {
  CoilArrayOptions o;
  o.coils = coils;
  MriData d;
  d.coil_maps = synthetic_coil_maps(o, ny, nx);
  d.mask = NdArray<uint8_t>(Shape{ny, nx}, 1);
  MaskedFourier e(ny, nx, d.mask, d.coil_maps);
  VecC y;
  e.apply(x, y);
  d.kspace = NdArray<cfloat>(Shape{coils, ny, nx});
  std::copy(y.data(), y.data() + y.size(), d.kspace.data.begin());
  return d;
}

VecC random_image(Index n) {
  Rng rng(1);
  VecC x(n);
  for (Index i = 0; i < n; ++i) x[i] = cfloat(static_cast<float>(rng.normal()), static_cast<float>(rng.normal()));
  return x;
}

TEST(ZeroFilled, SensitivityCombinationOfFullySampledDataReturnsTheImage) {
  const Index ny = 24, nx = 30;
  const VecC x = random_image(ny * nx);
  const ImageC img = zero_filled(simulate(ny, nx, 4, x), CoilCombine::kSensitivity);
  double err = 0, ref = 0;
  for (Index i = 0; i < ny * nx; ++i) {
    err += std::norm(std::complex<double>(img.data()[i] - x[i]));
    ref += std::norm(std::complex<double>(x[i]));
  }
  EXPECT_LT(std::sqrt(err / ref), 1e-5);
}

TEST(ZeroFilled, SumOfSquaresOfFullySampledDataIsTheMagnitude) {
  const Index ny = 16, nx = 16;
  const VecC x = random_image(ny * nx);
  const ImageC img = zero_filled(simulate(ny, nx, 8, x), CoilCombine::kSumOfSquares);
  for (Index i = 0; i < ny * nx; ++i) {
    EXPECT_NEAR(img.data()[i].real(), std::abs(x[i]), 1e-4 * (1 + std::abs(x[i])));
    EXPECT_EQ(img.data()[i].imag(), 0.0f);
  }
}

TEST(ZeroFilled, IgnoresValuesAtUnsampledPoints) {
  const Index ny = 16, nx = 16;
  MriData d = simulate(ny, nx, 1, random_image(ny * nx));
  d.mask.data[5] = 0;
  const ImageC a = zero_filled(d, CoilCombine::kSensitivity);
  d.kspace.data[5] = cfloat(1e6f, 0.0f);
  const ImageC b = zero_filled(d, CoilCombine::kSensitivity);
  EXPECT_LT((a - b).abs().maxCoeff(), 1e-6f);
}

TEST(ZeroFilled, RejectsMaskWhoseShapeDiffersFromKspace) {
  MriData d = simulate(8, 8, 1, random_image(64));
  d.mask = NdArray<uint8_t>(Shape{8, 9}, 1);
  try {
    zero_filled(d, CoilCombine::kSumOfSquares, "m.h5");
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/mri/mask");
    EXPECT_EQ(e.file(), "m.h5");
  }
}

TEST(ZeroFilled, SensitivityCombinationNeedsCoilMaps) {
  MriData d = simulate(8, 8, 2, random_image(64));
  d.coil_maps = {};
  EXPECT_THROW(zero_filled(d, CoilCombine::kSensitivity), InputError);
  EXPECT_NO_THROW(zero_filled(d, CoilCombine::kSumOfSquares));
}

TEST(ZeroFilled, CombinationNamesRoundTrip) {
  for (CoilCombine c : {CoilCombine::kSumOfSquares, CoilCombine::kSensitivity})
    EXPECT_EQ(parse_coil_combine(to_string(c)), c);
  EXPECT_FALSE(parse_coil_combine("max").has_value());
}

}  // namespace
}  // namespace recofold
