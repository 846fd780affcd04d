// SPDX-License-Identifier: Apache-2.0
// reconstruct_measurement: operator from the record, lambda-auto rules per modality, history, input checks.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/recon/pipeline.h"

namespace recofold {
namespace {

constexpr Index kN = 32;

// A piecewise-constant object in [0, 1]: a disk of 0.5 with a brighter square and a dark spot.
ImageF object() {
  ImageF img(kN, kN);
  for (Index r = 0; r < kN; ++r)
    for (Index c = 0; c < kN; ++c) {
      const double y = (r - kN / 2 + 0.5) / (kN / 2), x = (c - kN / 2 + 0.5) / (kN / 2);
      float v = (x * x + y * y < 0.7) ? 0.5f : 0.0f;
      if (std::abs(x - 0.2) < 0.2 && std::abs(y + 0.1) < 0.25) v = 1.0f;
      if ((x + 0.35) * (x + 0.35) + (y - 0.2) * (y - 0.2) < 0.02) v = 0.2f;
      img(r, c) = v;
    }
  return img;
}

VecC as_vector(const ImageF& img) {
  VecC v(img.size());
  for (Index i = 0; i < img.size(); ++i) v[i] = cfloat(img.data()[i], 0.0f);
  return v;
}

ImageF real_image(const VecC& x) {
  ImageF img(kN, kN);
  for (Index i = 0; i < kN * kN; ++i) img.data()[i] = x[i].real();
  return img;
}

// Two coils with smooth sensitivities along y, rows sampled every third line plus a 6-line centre, complex noise.
Measurement mri_measurement(double sigma) {
  MriData mri;
  mri.mask = NdArray<uint8_t>(Shape{kN, kN});
  for (Index r = 0; r < kN; ++r)
    for (Index c = 0; c < kN; ++c)
      mri.mask.data[static_cast<size_t>(r * kN + c)] = (r % 3 == 0 || std::abs(r - kN / 2) < 3) ? 1 : 0;
  mri.coil_maps = NdArray<cfloat>(Shape{2, kN, kN});
  for (Index r = 0; r < kN; ++r)
    for (Index c = 0; c < kN; ++c) {
      const double t = double(r) / (kN - 1);  // varies along the undersampled direction
      const double a = std::sqrt(0.2 + 0.6 * t), b = std::sqrt(1.0 - (0.2 + 0.6 * t));
      mri.coil_maps.data[static_cast<size_t>(r * kN + c)] = cfloat(float(a), 0.0f);
      mri.coil_maps.data[static_cast<size_t>(kN * kN + r * kN + c)] = cfloat(0.0f, float(b));
    }
  MaskedFourier a(kN, kN, mri.mask, mri.coil_maps);
  VecC y;
  a.apply(as_vector(object()), y);
  Rng rng(11);
  for (Index k = 0; k < y.size(); ++k)
    if (mri.mask.data[static_cast<size_t>(k % (kN * kN))])
      y[k] += cfloat(float(sigma * rng.normal()), float(sigma * rng.normal()));
  mri.kspace = NdArray<cfloat>(Shape{2, kN, kN});
  for (Index k = 0; k < y.size(); ++k) mri.kspace.data[static_cast<size_t>(k)] = y[k];
  mri.noise_sigma = sigma;
  Measurement m;
  m.modality = Modality::kMri;
  m.ny = m.nx = kN;
  m.mri = std::move(mri);
  return m;
}

// Parallel beam, `views` over 180 degrees, Gaussian noise of the size Poisson noise at I0 = 1e4 would give.
Measurement ct_measurement(int views) {
  CtGeometry g;
  g.ny = g.nx = kN;
  g.pixel_size_mm = 1.0;
  for (int i = 0; i < views; ++i) g.angles_rad.push_back(M_PI * i / views);
  g.detector_count = 46;
  g.detector_spacing_mm = 1.0;
  const double mu = 0.1;
  JosephProjector a(g, mu);
  const ImageF img = object();
  NdArray<float> sino(Shape{views, g.detector_count});
  a.project(img.data(), sino.ptr());
  Rng rng(5);
  const double photons = 1e4;
  for (float& p : sino.data) p += float(std::sqrt(std::exp(std::max(0.0f, p)) / photons) * rng.normal());
  Measurement m;
  m.modality = Modality::kCt;
  m.ny = m.nx = kN;
  CtData ct;
  store_geometry(g, ct);
  ct.sinogram = std::move(sino);
  ct.photons_per_ray = photons;
  ct.mu_per_mm = mu;
  m.ct = std::move(ct);
  return m;
}

TEST(ReconstructMeasurement, MriWaveletFistaWithDiscrepancyLambdaBeatsTheAdjoint) {
  const Measurement m = mri_measurement(0.01);
  ReconRequest req;
  req.method = SolverMethod::kFista;
  req.prior.kind = PriorKind::kWavelet;
  req.prior.wavelet.family = WaveletFamily::kDb2;
  req.prior.wavelet.levels = 2;
  req.lambda_auto = true;
  req.iterations = 40;
  const ReconResult r = reconstruct_measurement(m, req);
  ASSERT_TRUE(r.lambda_curve.has_value());
  EXPECT_GT(r.lambda, 0.0);
  EXPECT_NE(r.lambda_rule.find("discrepancy principle"), std::string::npos) << r.lambda_rule;
  // The target is 2 m sigma^2 with m = sampled points x coils.
  Index sampled = 0;
  for (uint8_t v : m.mri->mask.data) sampled += v;
  EXPECT_NEAR(r.lambda_target, 2.0 * double(sampled * 2) * 0.01 * 0.01, 1e-9);
  EXPECT_EQ(r.summary.iterations.size(), 40u);
  EXPECT_EQ(r.summary.history_table().rows.shape[0], 40);

  ReconRequest cg;
  cg.method = SolverMethod::kCg;
  cg.prior.kind = PriorKind::kNone;
  cg.iterations = 1;  // one CG step from zero: a scaled A^H y
  const ReconResult adjoint = reconstruct_measurement(m, cg);
  const ImageF truth = object();
  EXPECT_GT(psnr(truth, real_image(r.image)), psnr(truth, real_image(adjoint.image)) + 2.0) << r.lambda_rule;
}

TEST(ReconstructMeasurement, CtTvPdhgWithHeldOutViewsLambdaBeatsLeastSquares) {
  const Measurement m = ct_measurement(36);
  ReconRequest req;
  req.method = SolverMethod::kPdhg;
  req.prior.kind = PriorKind::kTv;
  req.prior.box = Box{};
  req.lambda_auto = true;
  req.iterations = 100;
  const ReconResult r = reconstruct_measurement(m, req);
  ASSERT_TRUE(r.lambda_curve.has_value());
  EXPECT_GE(r.lambda_curve->points.size(), 3u);
  EXPECT_GE(r.lambda_curve->best, 0);
  EXPECT_GT(r.lambda, 0.0);
  EXPECT_NE(r.lambda_rule.find("held-out views"), std::string::npos) << r.lambda_rule;
  EXPECT_NE(r.lambda_rule.find("6 of 36"), std::string::npos) << r.lambda_rule;
  EXPECT_FALSE(r.summary.iterations.empty());

  ReconRequest ls;
  ls.method = SolverMethod::kCg;
  ls.prior.kind = PriorKind::kNone;
  ls.iterations = 30;
  const ReconResult plain = reconstruct_measurement(m, ls);
  const ImageF truth = object();
  EXPECT_GT(psnr(truth, real_image(r.image)), psnr(truth, real_image(plain.image)) + 1.0) << r.lambda_rule;
}

TEST(ReconstructMeasurement, RejectsRequestsThatMakeNoSenseNamingTheFlag) {
  const Measurement mri = mri_measurement(0.01);
  auto field_of = [](const Measurement& m, const ReconRequest& q) -> std::string {
    try {
      reconstruct_measurement(m, q, "meas.h5");
    } catch (const InputError& e) {
      EXPECT_EQ(e.file(), "meas.h5");
      return e.field();
    }
    return "no error";
  };
  ReconRequest none_fista;
  none_fista.method = SolverMethod::kFista;
  none_fista.prior.kind = PriorKind::kNone;
  EXPECT_EQ(field_of(mri, none_fista), "--prior");
  ReconRequest negative;
  negative.prior.kind = PriorKind::kTv;
  negative.prior.lambda = -1.0;
  EXPECT_EQ(field_of(mri, negative), "--lambda");
  ReconRequest auto_without_prior;
  auto_without_prior.method = SolverMethod::kCg;
  auto_without_prior.lambda_auto = true;
  EXPECT_EQ(field_of(mri, auto_without_prior), "--lambda");
  ReconRequest tv_cg;
  tv_cg.method = SolverMethod::kCg;
  tv_cg.prior.kind = PriorKind::kTv;
  EXPECT_EQ(field_of(mri, tv_cg), "--prior");
  ReconRequest levels;
  levels.prior.kind = PriorKind::kWavelet;
  levels.prior.wavelet.levels = 6;  // 32 is not divisible by 64
  levels.prior.lambda = 0.01;
  EXPECT_EQ(field_of(mri, levels), "--levels");
  // Held-out views need at least 12 views.
  ReconRequest few;
  few.method = SolverMethod::kPdhg;
  few.prior.kind = PriorKind::kTv;
  few.lambda_auto = true;
  EXPECT_EQ(field_of(ct_measurement(8), few), "--lambda");
}

}  // namespace
}  // namespace recofold
