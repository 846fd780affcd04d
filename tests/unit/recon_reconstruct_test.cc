// SPDX-License-Identifier: Apache-2.0
// reconstruct() and ReconSpec: lambda rules per modality, defaults, one objective for every solver, field-path checks.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/forward_model.h"
#include "recofold/recon/reconstruct.h"

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

ImageF real_image(const ImageC& x) {
  ImageF img(x.rows(), x.cols());
  for (Index i = 0; i < x.size(); ++i) img.data()[i] = x.data()[i].real();
  return img;
}

ReconSpec spec_of(Method method, PriorKind prior) {
  ReconSpec s;
  s.method = method;
  s.prior.kind = prior;
  return s;
}

TEST(Reconstruct, MriWaveletFistaWithDiscrepancyLambdaBeatsTheAdjoint) {
  const Measurement m = mri_measurement(0.01);
  ReconSpec spec = spec_of(Method::kFista, PriorKind::kWavelet);
  spec.prior.wavelet.family = WaveletFamily::kDb2;
  spec.prior.wavelet.levels = 2;
  spec.lambda.mode = LambdaMode::kAuto;
  spec.iterations = 40;
  const Reconstruction r = reconstruct(m, spec);
  ASSERT_TRUE(r.lambda.curve.has_value());
  EXPECT_GT(r.lambda.value, 0.0);
  EXPECT_EQ(r.lambda.rule_name, "discrepancy");
  EXPECT_NE(r.lambda.rule.find("discrepancy principle"), std::string::npos) << r.lambda.rule;
  // The target is 2 m sigma^2 with m = sampled points x coils.
  Index sampled = 0;
  for (uint8_t v : m.mri->mask.data) sampled += v;
  EXPECT_NEAR(r.lambda.target, 2.0 * double(sampled * 2) * 0.01 * 0.01, 1e-9);
  EXPECT_EQ(r.summary.iterations.size(), 40u);
  EXPECT_EQ(r.summary.history_table().rows.shape[0], 40);
  // The spec as run carries the defaults that were filled in.
  EXPECT_EQ(*r.spec.prior.wavelet.cycle_spin, true);
  EXPECT_EQ(*r.spec.lambda.max_solves, 16);
  EXPECT_EQ(*r.spec.nonneg, false);

  ReconSpec cg = spec_of(Method::kCg, PriorKind::kNone);
  cg.iterations = 1;  // one CG step from zero: a scaled A^H y
  const Reconstruction adjoint = reconstruct(m, cg);
  const ImageF truth = object();
  EXPECT_GT(psnr(truth, real_image(r.image)), psnr(truth, real_image(adjoint.image)) + 2.0) << r.lambda.rule;
}

TEST(Reconstruct, CtTvPdhgWithHeldOutViewsLambdaBeatsLeastSquares) {
  const Measurement m = ct_measurement(36);
  ReconSpec spec = spec_of(Method::kPdhg, PriorKind::kTv);
  spec.iterations = 100;
  const Reconstruction r = reconstruct(m, spec);  // lambda auto and non-negativity by default on CT
  EXPECT_EQ(*r.spec.nonneg, true);
  EXPECT_EQ(*r.spec.lambda.rule, LambdaRule::kHeldOutViews);
  ASSERT_TRUE(r.lambda.curve.has_value());
  EXPECT_GE(r.lambda.curve->points.size(), 3u);
  EXPECT_GE(r.lambda.curve->best, 0);
  EXPECT_GT(r.lambda.value, 0.0);
  EXPECT_NE(r.lambda.rule.find("held-out views"), std::string::npos) << r.lambda.rule;
  EXPECT_NE(r.lambda.rule.find("6 of 36"), std::string::npos) << r.lambda.rule;
  EXPECT_FALSE(r.summary.iterations.empty());

  ReconSpec ls = spec_of(Method::kCg, PriorKind::kNone);
  ls.iterations = 30;
  const Reconstruction plain = reconstruct(m, ls);
  const ImageF truth = object();
  EXPECT_GT(psnr(truth, real_image(r.image)), psnr(truth, real_image(plain.image)) + 1.0) << r.lambda.rule;
}

TEST(Reconstruct, EveryIterativeMethodMinimisesTheSameTikhonovObjective) {
  const Measurement m = mri_measurement(0.01);
  const ForwardModel fm = make_forward_model(m);
  const double mu = 0.2;
  auto objective = [&](const ImageC& img) {
    const VecC x = Eigen::Map<const VecC>(img.data(), img.size());
    VecC r;
    fm.op->apply(x, r);
    return 0.5 * static_cast<double>((r - fm.y).squaredNorm()) + 0.5 * mu * static_cast<double>(x.squaredNorm());
  };
  CgOptions exact;
  exact.max_iterations = 300;
  exact.tolerance = 1e-9;
  exact.tikhonov = mu;
  VecC xe;
  solve_cg(exact, *fm.op, fm.y, xe);
  const double fe = objective(Eigen::Map<const ImageC>(xe.data(), kN, kN));
  for (Method method : {Method::kCg, Method::kIsta, Method::kFista, Method::kAdmm, Method::kPdhg}) {
    ReconSpec s = spec_of(method, PriorKind::kL2);
    s.lambda.mode = LambdaMode::kValue;
    s.lambda.value = mu;  // L2Prior: lambda/2 ||x||^2
    s.iterations = 300;
    s.tolerance = 0.0;
    const Reconstruction r = reconstruct(m, s);
    EXPECT_EQ(r.summary.solver, to_string(method));
    EXPECT_NEAR(objective(r.image), fe, 2e-3 * fe) << to_string(method);
  }
}

TEST(Reconstruct, GridWithOracleKeepsTheFixedLambdaImageClosestToTheTruth) {
  Measurement m = mri_measurement(0.02);
  NdArray<cfloat> truth(Shape{kN, kN});
  const ImageF obj = object();
  for (Index i = 0; i < obj.size(); ++i) truth.data[size_t(i)] = cfloat(obj.data()[i], 0.0f);
  m.truth = truth;
  ReconSpec grid = spec_of(Method::kFista, PriorKind::kTv);
  grid.lambda.mode = LambdaMode::kGrid;
  grid.lambda.grid = {1e-4, 0.02, 5.0};
  grid.iterations = 30;
  const Reconstruction g = reconstruct(m, grid);
  ASSERT_TRUE(g.lambda.curve.has_value());
  ASSERT_EQ(g.lambda.curve->points.size(), 3u);
  EXPECT_EQ(g.lambda.rule_name, "oracle");
  EXPECT_EQ(g.lambda.value, 0.02);  // far too little and far too much prior lose
  ReconSpec fixed = grid;
  fixed.lambda.mode = LambdaMode::kValue;
  fixed.lambda.value = 0.02;
  const Reconstruction f = reconstruct(m, fixed);
  ASSERT_EQ(f.image.size(), g.image.size());
  for (Index i = 0; i < f.image.size(); ++i) ASSERT_EQ(f.image.data()[i], g.image.data()[i]) << i;
}

// The violations of a spec, by field path.
std::vector<std::string> fields_of(const ReconSpec& s, Modality modality = Modality::kMri,
                                   Shape shape = Shape{kN, kN}) {
  std::vector<std::string> out;
  for (const FieldError& e : s.validate(modality, shape)) out.push_back(e.field);
  return out;
}

TEST(ReconSpec, ValidateNamesEveryViolationByFieldPath) {
  using V = std::vector<std::string>;
  EXPECT_EQ(fields_of(spec_of(Method::kFista, PriorKind::kWavelet)), V{});
  EXPECT_EQ(fields_of(spec_of(Method::kFista, PriorKind::kNone)), V{"prior"});
  EXPECT_EQ(fields_of(spec_of(Method::kCg, PriorKind::kTv)), V{"prior"});
  EXPECT_EQ(fields_of(spec_of(Method::kFbp, PriorKind::kNone)), V{"method"});
  ReconSpec s = spec_of(Method::kFista, PriorKind::kWavelet);
  s.prior.wavelet.levels = 9;
  s.lambda.mode = LambdaMode::kValue;
  s.lambda.value = -1.0;
  s.iterations = 0;
  s.admm.cg_iterations = 3;
  const std::vector<FieldError> e = s.validate(Modality::kMri, Shape{64, 64});
  ASSERT_EQ(e.size(), 4u);
  EXPECT_EQ(e[0].text(), "admm.cg_iterations = 3; applies only to method admm");
  EXPECT_EQ(e[1].text(), "prior.wavelet.levels = 9; must be 1..6 for 64x64");
  EXPECT_EQ(e[2].text(), "lambda = -1; must be >= 0 and finite, or auto");
  EXPECT_EQ(e[3].field, "iterations");
  // A default that cannot work on the grid is reported as such.
  const std::vector<FieldError> odd = spec_of(Method::kFista, PriorKind::kWavelet).validate(Modality::kMri, Shape{20, 20});
  ASSERT_EQ(odd.size(), 1u);
  EXPECT_EQ(odd[0].text(), "prior.wavelet.levels = 3 (default); must be 1..2 for 20x20");
  ReconSpec tv = spec_of(Method::kPdhg, PriorKind::kTv);
  tv.prior.wavelet.levels = 2;
  tv.pdhg.tau = 0.1;
  EXPECT_EQ(fields_of(tv), (V{"prior.wavelet.levels", "pdhg.sigma"}));
  ReconSpec cg_box = spec_of(Method::kCg, PriorKind::kL2);
  cg_box.nonneg = true;
  EXPECT_EQ(fields_of(cg_box), V{"nonneg"});
  ReconSpec rule = spec_of(Method::kFista, PriorKind::kTv);
  rule.lambda.rule = LambdaRule::kHeldOutViews;
  EXPECT_EQ(fields_of(rule), V{"lambda.rule"});  // held-out views need CT
  EXPECT_EQ(fields_of(rule, Modality::kCt), V{});
  ReconSpec unrolled;
  unrolled.method = Method::kUnrolled;
  EXPECT_EQ(fields_of(unrolled), V{"model"});
  unrolled.iterations = 5;
  unrolled.model = "m.h5";
  EXPECT_EQ(fields_of(unrolled), V{"iterations"});
}

TEST(ReconSpec, WithDefaultsIsTheOnlySourceOfDefaultsPerMethodAndModality) {
  const ReconSpec f = spec_of(Method::kFista, PriorKind::kWavelet).with_defaults(Modality::kMri);
  EXPECT_EQ(*f.iterations, 60);
  EXPECT_EQ(*f.tolerance, 0.0);
  EXPECT_EQ(*f.fista.restart, true);
  EXPECT_EQ(*f.prior.wavelet.levels, 3);
  EXPECT_EQ(*f.prior.wavelet.family, WaveletFamily::kDb4);
  EXPECT_EQ(*f.lambda.mode, LambdaMode::kAuto);
  EXPECT_FALSE(f.admm.cg_iterations.has_value());  // does not apply
  ReconSpec ista;
  ista.method = Method::kIsta;
  EXPECT_EQ(*ista.with_defaults(Modality::kMri).prior.kind, PriorKind::kWavelet);
  EXPECT_EQ(*ista.with_defaults(Modality::kCt).prior.kind, PriorKind::kTv);
  const ReconSpec a = spec_of(Method::kAdmm, PriorKind::kTv).with_defaults(Modality::kCt);
  EXPECT_EQ(*a.admm.cg_iterations, 4);
  EXPECT_EQ(*a.nonneg, true);
  EXPECT_EQ(*a.lambda.max_solves, 12);
  ReconSpec zf;
  zf.method = Method::kZeroFilled;
  EXPECT_EQ(*zf.with_defaults(Modality::kMri).zero_filled.combine, CoilCombine::kSensitivity);
  EXPECT_FALSE(zf.with_defaults(Modality::kMri).iterations.has_value());
}

TEST(Reconstruct, RejectsSpecsAndMeasurementsThatDoNotFitNamingTheFieldPath) {
  const Measurement mri = mri_measurement(0.01);
  auto field_of = [](const Measurement& m, const ReconSpec& q) -> std::string {
    ReconHooks h;
    h.file = "meas.h5";
    try {
      reconstruct(m, q, h);
    } catch (const InputError& e) {
      EXPECT_EQ(e.file(), "meas.h5");
      return e.field();
    }
    return "no error";
  };
  EXPECT_EQ(field_of(mri, spec_of(Method::kFista, PriorKind::kNone)), "prior");
  ReconSpec levels = spec_of(Method::kFista, PriorKind::kWavelet);
  levels.prior.wavelet.levels = 6;  // 32 is not divisible by 64
  EXPECT_EQ(field_of(mri, levels), "prior.wavelet.levels");
  // Held-out views need at least 12 views.
  EXPECT_EQ(field_of(ct_measurement(8), spec_of(Method::kPdhg, PriorKind::kTv)), "lambda");
  // The discrepancy rule needs the noise level.
  EXPECT_EQ(field_of(mri_measurement(0.0), spec_of(Method::kFista, PriorKind::kTv)), "lambda");
  // No learned backend is registered in this test program.
  ReconSpec unrolled;
  unrolled.method = Method::kUnrolled;
  unrolled.model = "model.h5";
  EXPECT_EQ(field_of(mri, unrolled), "method");
}

}  // namespace
}  // namespace recofold
