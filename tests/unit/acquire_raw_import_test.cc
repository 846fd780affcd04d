// SPDX-License-Identifier: Apache-2.0
// Raw k-space to a measurement: pre-whitening, readout-oversampling removal,
// the noise level with and without noise scans, and the ISMRMRD export round trip.
#include <gtest/gtest.h>
#include <unistd.h>

#include <Eigen/Dense>

#include <cmath>
#include <string>
#include <vector>

#include "recofold/acquire/mri.h"
#include "recofold/acquire/raw_import.h"
#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/io/ismrmrd_file.h"
#include "recofold/ops/fft.h"
#include "test_dirs.h"

namespace recofold {
namespace {

std::string fresh_dir() { return recofold::testing::fresh_test_dir("recofold_raw_import"); }

RawCartesian blank(Index coils, Index ey, Index ex) {
  RawCartesian r;
  r.coils = coils;
  r.ey = ey;
  r.ex = ex;
  r.readout_keep = ex;
  r.kspace = NdArray<cfloat>(Shape{coils, ey, ex});
  r.sampled = NdArray<uint8_t>(Shape{ey, ex}, 1);
  r.encoded_fov_mm[0] = 2.0 * ex;
  r.encoded_fov_mm[1] = 3.0 * ey;
  r.encoded_fov_mm[2] = 5.0;
  r.trajectory = "cartesian";
  return r;
}

TEST(RawImport, PrewhiteningDecorrelatesTheChannelsAndStatesTheNoiseLevel) {
  const Index coils = 3, ey = 128, ex = 128, n = ey * ex;
  RawCartesian r = blank(coils, ey, ex);
  Eigen::Matrix3cd l;
  l << cdouble(1.0, 0), 0, 0, cdouble(0.6, 0.2), cdouble(0.8, 0), 0, cdouble(-0.3, 0.1), cdouble(0.4, -0.2), cdouble(1.5, 0);
  // z: complex white noise of unit std per part (complex variance 2); y = L z.
  Rng rng(11);
  NdArray<cfloat> z(Shape{coils, ey, ex});
  add_kspace_noise(z, NdArray<uint8_t>(Shape{ey, ex}, 1), 1.0, 0.0, rng);
  for (Index p = 0; p < n; ++p) {
    Eigen::Vector3cd v;
    for (Index c = 0; c < coils; ++c) v(c) = cdouble(z.data[static_cast<size_t>(c * n + p)]);
    const Eigen::Vector3cd y = l * v;
    for (Index c = 0; c < coils; ++c) r.kspace.data[static_cast<size_t>(c * n + p)] = cfloat(y(c));
  }
  const Eigen::Matrix3cd cov = 2.0 * l * l.adjoint();
  r.noise_covariance.resize(9);
  for (int a = 0; a < 3; ++a)
    for (int b = 0; b < 3; ++b) r.noise_covariance[static_cast<size_t>(a * 3 + b)] = cov(a, b);
  r.noise_samples = 4096;
  const Measurement m = measurement_from_raw(r, RawImportOptions{}, "raw.h5");
  const double s2 = cov.trace().real() / 3.0;
  EXPECT_NEAR(m.mri->noise_sigma, std::sqrt(s2 / 2.0), 1e-12);
  // Sample covariance of the whitened channels: s² I.
  Eigen::Matrix3cd out = Eigen::Matrix3cd::Zero();
  for (Index p = 0; p < n; ++p) {
    Eigen::Vector3cd v;
    for (Index c = 0; c < coils; ++c) v(c) = cdouble(m.mri->kspace.data[static_cast<size_t>(c * n + p)]);
    out += v * v.adjoint();
  }
  out /= static_cast<double>(n);
  for (int a = 0; a < 3; ++a)
    for (int b = 0; b < 3; ++b) EXPECT_NEAR(std::abs(out(a, b) - (a == b ? s2 : 0.0)) / s2, 0.0, 0.03) << a << b;
  EXPECT_NE(m.mri->texts.at("prewhitening").find("applied"), std::string::npos);

  RawImportOptions keep;
  keep.prewhiten = false;
  const Measurement raw_channels = measurement_from_raw(r, keep, "raw.h5");
  EXPECT_EQ(raw_channels.mri->kspace.data, r.kspace.data);
  EXPECT_NE(raw_channels.mri->texts.at("prewhitening").find("not applied"), std::string::npos);
}

TEST(RawImport, PrewhiteningScalesTheCovarianceByTheDwellTimeRatio) {
  RawCartesian r = blank(2, 8, 8);
  r.noise_covariance = {cdouble(2, 0), cdouble(0, 0), cdouble(0, 0), cdouble(2, 0)};
  r.noise_samples = 100;
  r.noise_dwell_us = 10.0;
  r.dwell_us = 2.5;  // 4x the bandwidth: 4x the noise power
  const Measurement m = measurement_from_raw(r, RawImportOptions{}, "raw.h5");
  EXPECT_NEAR(m.mri->noise_sigma, std::sqrt(8.0 / 2.0), 1e-12);
}

TEST(RawImport, RefusesANoiseCovarianceThatIsNotPositiveDefinite) {
  RawCartesian r = blank(2, 8, 8);
  r.noise_covariance = {cdouble(1, 0), cdouble(1, 0), cdouble(1, 0), cdouble(1, 0)};  // identical channels
  r.noise_samples = 100;
  try {
    measurement_from_raw(r, RawImportOptions{}, "raw.h5");
    FAIL() << "a singular covariance was accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("not positive definite"), std::string::npos) << e.what();
    EXPECT_EQ(e.file(), "raw.h5");
  }
}

TEST(RawImport, ReadoutOversamplingRemovalEqualsCroppingTheImageAlongX) {
  const Index coils = 2, ey = 12, ex = 32, keep = 16;
  RawCartesian r = blank(coils, ey, ex);
  r.readout_keep = keep;
  Rng rng(5);
  add_kspace_noise(r.kspace, r.sampled, 1.0, 0.0, rng);
  const Measurement m = measurement_from_raw(r, RawImportOptions{}, "raw.h5");
  ASSERT_EQ(m.nx, keep);
  ASSERT_EQ(m.ny, ey);
  EXPECT_DOUBLE_EQ(m.pixel_spacing_mm[1], 2.0);  // encoded FOV x / ex
  EXPECT_DOUBLE_EQ(m.pixel_spacing_mm[0], 3.0);
  EXPECT_DOUBLE_EQ(m.mri->numbers.at("readout_oversampling"), 2.0);
  // Reference: 2-D image of each coil on the encoded grid, centre columns, back to k-space.
  for (Index c = 0; c < coils; ++c) {
    ImageC k(ey, ex);
    std::copy(r.kspace.ptr() + c * ey * ex, r.kspace.ptr() + (c + 1) * ey * ex, k.data());
    const ImageC img = ifft2c(k);
    const ImageC crop = img.block(0, ex / 2 - keep / 2, ey, keep);
    // Orthonormal transforms along x on both grids: the image of the result is
    // the centre of the encoded image, value for value.
    ImageC ours(ey, keep);
    std::copy(m.mri->kspace.ptr() + c * ey * keep, m.mri->kspace.ptr() + (c + 1) * ey * keep, ours.data());
    const ImageC ours_img = ifft2c(ours);
    EXPECT_LT((ours_img - crop).abs().maxCoeff(), 1e-5f * crop.abs().maxCoeff()) << "coil " << c;
  }
}

TEST(RawImport, EstimatesTheNoiseLevelWithoutNoiseScans) {
  const Index coils = 4, ny = 96, nx = 96;
  RawCartesian r = blank(coils, ny, nx);
  // A smooth object plus noise of sigma 0.2 per part.
  for (Index c = 0; c < coils; ++c)
    for (Index y = 0; y < ny; ++y)
      for (Index x = 0; x < nx; ++x) {
        const double dy = y - ny / 2.0, dx = x - nx / 2.0;
        r.kspace.data[static_cast<size_t>((c * ny + y) * nx + x)] =
            cfloat(static_cast<float>(50.0 * std::exp(-(dx * dx + dy * dy) / 20.0) * (c + 1)), 0.f);
      }
  Rng rng(9);
  add_kspace_noise(r.kspace, r.sampled, 0.2, 0.0, rng);
  const Measurement m = measurement_from_raw(r, RawImportOptions{}, "raw.h5");
  EXPECT_NEAR(m.mri->noise_sigma / 0.2, 1.0, 0.05);
  EXPECT_NE(m.mri->texts.at("noise_sigma_source").find("estimated"), std::string::npos);
  r.header_noise_sigma = 0.123;
  EXPECT_DOUBLE_EQ(measurement_from_raw(r, RawImportOptions{}, "raw.h5").mri->noise_sigma, 0.123);
}

TEST(RawImport, ExportThenImportGivesIdenticalArrays) {
  const std::string dir = fresh_dir();
  MaskOptions mo;
  mo.pattern = MaskPattern::kLinesVd;
  mo.ny = mo.nx = 32;
  mo.acceleration = 3.0;
  mo.center_fraction = 0.25;
  mo.seed = 2;
  const SamplingMask mask = make_mask(mo);
  MriSimulationOptions so;
  so.coil_array.coils = 4;
  so.truth = MriTruth::kDiscrete;
  so.noise_sigma = 0.01;
  so.seed = 4;
  ImageC raster = ImageC::Zero(32, 32);
  raster.block(8, 10, 14, 12) = cfloat(1.0f, 0.0f);
  const Measurement m = simulate_mri(nullptr, raster, 1.5, mask, so);
  write_ismrmrd_file(dir + "/raw.h5", m, "sim.h5");
  const Measurement back = measurement_from_raw(read_ismrmrd_file(dir + "/raw.h5"), RawImportOptions{}, dir + "/raw.h5");
  EXPECT_EQ(back.ny, m.ny);
  EXPECT_EQ(back.nx, m.nx);
  EXPECT_EQ(back.mri->kspace.shape, m.mri->kspace.shape);
  EXPECT_EQ(back.mri->kspace.data, m.mri->kspace.data);
  EXPECT_EQ(back.mri->mask.data, m.mri->mask.data);
  EXPECT_DOUBLE_EQ(back.mri->noise_sigma, m.mri->noise_sigma);
  EXPECT_DOUBLE_EQ(back.pixel_spacing_mm[0], 1.5);
  EXPECT_DOUBLE_EQ(back.pixel_spacing_mm[1], 1.5);
  EXPECT_NEAR(back.mri->acceleration, m.mri->acceleration, 1e-12);
}

}  // namespace
}  // namespace recofold
