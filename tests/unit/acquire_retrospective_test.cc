// SPDX-License-Identifier: Apache-2.0
// Retrospective undersampling: the kept samples, the fully sampled coil-combined
// truth, the noise level, refusals, and TV with auto lambda against zero-filled
// at R = 4 with ESPIRiT maps estimated from the data (the real-data path).
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>

#include "recofold/acquire/mri.h"
#include "recofold/acquire/retrospective.h"
#include "recofold/core/error.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/ops/espirit.h"
#include "recofold/ops/fft.h"
#include "recofold/phantom/raster.h"
#include "recofold/recon/reconstruct.h"
#include "recofold/recon/zero_filled.h"
#include "recofold/sampling/mask.h"

namespace recofold {
namespace {

Phantom shepp_logan_modified() {
  const double t[10][6] = {{1.0, .69, .92, 0, 0, 0},          {-.8, .6624, .874, 0, -.0184, 0},
                           {-.2, .11, .31, .22, 0, -18},       {-.2, .16, .41, -.22, 0, 18},
                           {.1, .21, .25, 0, .35, 0},          {.1, .046, .046, 0, .1, 0},
                           {.1, .046, .046, 0, -.1, 0},        {.1, .046, .023, -.08, -.605, 0},
                           {.1, .023, .023, 0, -.606, 0},      {.1, .023, .046, .06, -.605, 0}};
  Phantom p;
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

// Fully sampled 8-coil analytic data with ESPIRiT maps in place of the true
// ones, as `import` leaves a real scan.
Measurement fully_sampled(Index n, double sigma) {
  const Phantom p = shepp_logan_modified();
  const ImageC raster = rasterize(p, static_cast<int>(n), static_cast<int>(n));
  SamplingMask full;
  full.mask = NdArray<uint8_t>(Shape{n, n}, 1);
  full.pattern = "full";
  full.samples = n * n;
  full.achieved_acceleration = 1.0;
  MriSimulationOptions o;
  o.coil_array.coils = 8;
  o.noise_sigma = sigma;
  o.seed = 5;
  Measurement m = simulate_mri(&p, raster, 1.0, full, o);
  m.mri->coil_maps = espirit_maps(m.mri->kspace, m.mri->mask, EspiritOptions{}).maps;
  m.mri->coil_maps_source = "espirit";
  m.truth.reset();
  return m;
}

SamplingMask lines_r4(Index n) {
  MaskOptions mo;
  mo.pattern = MaskPattern::kLinesVd;
  mo.ny = mo.nx = n;
  mo.acceleration = 4.0;
  mo.center_fraction = 0.08;
  mo.seed = 1;
  return make_mask(mo);
}

TEST(Retrospective, KeepsTheMaskedSamplesAndStatesTheFullySampledTruth) {
  const Measurement full = fully_sampled(64, 0.002);
  const SamplingMask mask = lines_r4(64);
  RetrospectiveOptions o;
  o.added_noise_sigma = 0.003;
  o.seed = 9;
  const Measurement m = undersample_retrospectively(full, mask, o, "full.h5");
  EXPECT_EQ(m.truth_kind, "fully sampled");
  EXPECT_TRUE(m.truth_is_complex);
  EXPECT_EQ(m.mri->mask.data, mask.mask.data);
  EXPECT_NEAR(m.mri->acceleration, mask.achieved_acceleration, 1e-12);
  EXPECT_NEAR(m.mri->noise_sigma, std::hypot(0.002, 0.003), 1e-12);
  EXPECT_EQ(m.mri->coil_maps.data, full.mri->coil_maps.data);
  const Index n = 64 * 64;
  double added = 0;
  Index kept = 0;
  for (Index c = 0; c < 8; ++c)
    for (Index p = 0; p < n; ++p) {
      const cfloat a = m.mri->kspace.data[static_cast<size_t>(c * n + p)], b = full.mri->kspace.data[static_cast<size_t>(c * n + p)];
      if (!mask.mask.data[static_cast<size_t>(p)]) {
        ASSERT_EQ(a, cfloat(0, 0));
      } else {
        added += std::norm(std::complex<double>(a - b));
        ++kept;
      }
    }
  EXPECT_NEAR(std::sqrt(added / (2.0 * kept)) / 0.003, 1.0, 0.05);  // the added noise has the asked std
  // The truth is the sensitivity-weighted combination of the full data.
  MriData fd = *full.mri;
  const ImageC want = zero_filled(fd, CoilCombine::kSensitivity);
  for (Index p = 0; p < n; ++p) ASSERT_LT(std::abs(m.truth->data[static_cast<size_t>(p)] - want.data()[p]), 1e-5f);
}

TEST(Retrospective, RefusesDataThatAreNotFullySampledOrDoNotFitTheMask) {
  const Measurement full = fully_sampled(64, 0.0);
  const Measurement under = undersample_retrospectively(full, lines_r4(64), {}, "full.h5");
  try {
    undersample_retrospectively(under, lines_r4(64), {}, "under.h5");
    FAIL() << "undersampled data were undersampled again";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/mri/mask");
    EXPECT_NE(std::string(e.what()).find("needs fully sampled data"), std::string::npos) << e.what();
  }
  EXPECT_THROW(undersample_retrospectively(full, lines_r4(32), {}, "full.h5"), InputError);
  RetrospectiveOptions bad;
  bad.added_noise_sigma = -1;
  EXPECT_THROW(undersample_retrospectively(full, lines_r4(64), bad, "full.h5"), InputError);
}

TEST(Retrospective, TvWithAutoLambdaBeatsZeroFilledByFiveDecibelsAtR4) {
  const Index n = 96;
  const Measurement full = fully_sampled(n, 0.002);
  const Measurement m = undersample_retrospectively(full, lines_r4(n), {}, "full.h5");
  ImageF truth(n, n);
  for (Index p = 0; p < n * n; ++p) truth.data()[p] = std::abs(m.truth->data[static_cast<size_t>(p)]);
  const ImageC zf = zero_filled(*m.mri, CoilCombine::kSensitivity);
  const double zf_psnr = psnr(truth, zf.abs());
  ReconSpec spec;
  spec.method = Method::kAdmm;
  spec.prior.kind = PriorKind::kTv;
  spec.lambda.mode = LambdaMode::kAuto;
  const Reconstruction r = reconstruct(m, spec);
  ImageF tv(n, n);
  for (Index p = 0; p < n * n; ++p) tv.data()[p] = std::abs(r.image(p));
  const double tv_psnr = psnr(truth, tv);
  std::printf("R = %.2f against the fully sampled image: zero-filled %.2f dB, ADMM-TV auto (lambda %.3g) %.2f dB\n",
              m.mri->acceleration, zf_psnr, r.lambda.value, tv_psnr);
  EXPECT_GE(tv_psnr, zf_psnr + 5.0);
}

}  // namespace
}  // namespace recofold
