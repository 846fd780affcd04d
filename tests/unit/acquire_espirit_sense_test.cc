// SPDX-License-Identifier: Apache-2.0
// ESPIRiT maps (ops/espirit.h) on synthetic 8-coil data with exact (analytic)
// k-space: subspace error against the simulator's true maps inside the
// object, and CG-SENSE with ESPIRiT maps against CG-SENSE with the true maps
// at R = 4. (Lives with the acquire tests because it needs the simulator,
// the CG solver and the metrics.)
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <vector>

#include "recofold/acquire/mri.h"
#include "recofold/core/error.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/ops/espirit.h"
#include "recofold/ops/fourier.h"
#include "recofold/phantom/raster.h"
#include "recofold/recon/cg.h"
#include "recofold/sampling/mask.h"

namespace recofold {
namespace {

// Shepp-Logan geometry with the higher-contrast intensities (DEVELOPERS.md "Sources").
Phantom shepp_logan_modified() {
  const double t[10][6] = {{1.0, .69, .92, 0, 0, 0},          {-.8, .6624, .874, 0, -.0184, 0},
                           {-.2, .11, .31, .22, 0, -18},       {-.2, .16, .41, -.22, 0, 18},
                           {.1, .21, .25, 0, .35, 0},          {.1, .046, .046, 0, .1, 0},
                           {.1, .046, .046, 0, -.1, 0},        {.1, .046, .023, -.08, -.605, 0},
                           {.1, .023, .023, 0, -.606, 0},      {.1, .023, .046, .06, -.605, 0}};
  Phantom p;
  p.name = "shepp-logan-modified";
  for (const auto& r : t) {
    Component c;
    c.intensity = cdouble(r[0], 0.0);
    c.a = r[1];
    c.b = r[2];
    c.x0 = r[3];
    c.y0 = r[4];
    c.phi_deg = r[5];
    p.components.push_back(c);
  }
  return p;
}

struct Case {
  Measurement m;
  ImageF truth;
  ImageF object;  // 1 inside the object (truth above 5 % of its maximum), else 0
};

Case simulate(const SamplingMask& mask, double sigma) {
  const Index n = 128;
  const Phantom p = shepp_logan_modified();
  const ImageC raster = rasterize(p, static_cast<int>(n), static_cast<int>(n));
  MriSimulationOptions o;
  o.coil_array.coils = 8;
  o.truth = MriTruth::kAnalytic;
  o.noise_sigma = sigma;
  o.seed = 3;
  Case c;
  c.m = simulate_mri(&p, raster, 1.0, mask, o);
  c.truth = raster.real();
  c.object = (c.truth > 0.05f * c.truth.maxCoeff()).cast<float>();
  return c;
}

SamplingMask r4_mask() {
  MaskOptions mo;
  mo.pattern = MaskPattern::kLinesUniform;
  mo.ny = mo.nx = 128;
  mo.acceleration = 4.0;
  mo.center_fraction = 0.16;  // about 20 calibration lines
  mo.seed = 1;
  return make_mask(mo);
}

TEST(Espirit, MapsSpanTheTrueSensitivitiesInsideTheObject) {
  const Case c = simulate(r4_mask(), 0.002);
  const MriData& mri = *c.m.mri;
  const EspiritResult e = espirit_maps(mri.kspace, mri.mask, EspiritOptions{});
  std::printf("%s\n", e.summary.c_str());
  ASSERT_GT(e.kernels, 0);
  const ImageF err = map_subspace_error(e.maps, mri.coil_maps);
  std::vector<float> inside;
  double sum2 = 0;
  for (Index i = 0; i < err.size(); ++i)
    if (c.object.data()[i] > 0) {
      inside.push_back(err.data()[i]);
      sum2 += double(err.data()[i]) * err.data()[i];
    }
  ASSERT_FALSE(inside.empty());
  std::sort(inside.begin(), inside.end());
  const double rms = std::sqrt(sum2 / inside.size());
  const double p99 = inside[static_cast<size_t>(0.99 * (inside.size() - 1))];
  std::printf("subspace error inside the object: rms %.4f, 99th percentile %.4f, max %.4f (%zu pixels)\n", rms, p99,
              inside.back(), inside.size());
  EXPECT_LE(rms, 0.05);
  EXPECT_LE(p99, 0.05);
  // Unit norm where kept, and no pixel of the object is cropped.
  const Index n = c.m.ny * c.m.nx;
  for (Index p = 0; p < n; ++p) {
    if (c.object.data()[p] <= 0) continue;
    double s = 0;
    for (Index coil = 0; coil < 8; ++coil) s += std::norm(e.maps.data[static_cast<size_t>(coil * n + p)]);
    ASSERT_NEAR(s, 1.0, 1e-4) << "pixel " << p;
    ASSERT_GE(e.eigenvalues.data[static_cast<size_t>(p)], 0.9f);
  }
}

TEST(Espirit, CgSenseWithEspiritMapsIsWithinOneDecibelOfTrueMapsAtR4) {
  const Case c = simulate(r4_mask(), 0.002);
  const MriData& mri = *c.m.mri;
  const EspiritResult e = espirit_maps(mri.kspace, mri.mask, EspiritOptions{});
  const VecC y = kspace_vector(mri);
  auto cg_psnr = [&](const NdArray<cfloat>& maps) {
    MaskedFourier op(c.m.ny, c.m.nx, mri.mask, maps);
    CgOptions o;
    o.max_iterations = 15;
    o.record_objective = false;
    VecC x;
    solve_cg(o, op, y, x);
    ImageF mag(c.m.ny, c.m.nx);
    for (Index i = 0; i < x.size(); ++i) mag.data()[i] = std::abs(x(i));
    return psnr(c.truth, mag);
  };
  const double with_true = cg_psnr(mri.coil_maps), with_espirit = cg_psnr(e.maps);
  std::printf("CG-SENSE at R = %.2f: true maps %.2f dB, ESPIRiT maps %.2f dB\n", mri.acceleration, with_true,
              with_espirit);
  EXPECT_GE(with_espirit, with_true - 1.0);
  EXPECT_GT(with_true, 20.0);  // the comparison is between working reconstructions
}

TEST(Espirit, RefusesACalibrationRegionSmallerThanTheKernel) {
  MaskOptions mo;
  mo.pattern = MaskPattern::kLinesUniform;
  mo.ny = mo.nx = 128;
  mo.acceleration = 4.0;
  mo.center_fraction = 0.03;  // 4 lines
  const Case c = simulate(make_mask(mo), 0.0);
  try {
    espirit_maps(c.m.mri->kspace, c.m.mri->mask, EspiritOptions{}, "meas.h5");
    FAIL() << "a 3-line centre was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/mri/mask");
    EXPECT_NE(std::string(e.what()).find("needs at least 7x7"), std::string::npos) << e.what();
  }
}

TEST(Espirit, OptionsReportEveryViolation) {
  EspiritOptions o;
  o.kernel_size = 1;
  o.calibration_size = 0;
  o.singular_threshold = 1.5;
  o.crop_threshold = -0.1;
  EXPECT_EQ(o.validate().size(), 4u);
  EXPECT_TRUE(EspiritOptions{}.validate().empty());
}

}  // namespace
}  // namespace recofold
