// SPDX-License-Identifier: Apache-2.0
// Denoising and inpainting: the pixel-mask operator's adjoint, the simulated
// records (noise level, kept fraction, field paths of bad options), the file
// round trip, zero-filled = the observed image, and TV inpainting of the head
// phantom against the observed image.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <filesystem>

#include "recofold/acquire/image_problem.h"
#include "recofold/core/error.h"
#include "recofold/core/field_error.h"
#include "recofold/io/measurement_file.h"
#include "recofold/metrics/image_quality.h"
#include "recofold/ops/pixel_mask.h"
#include "recofold/phantom/raster.h"
#include "recofold/recon/forward_model.h"
#include "recofold/recon/reconstruct.h"

namespace recofold {
namespace {

// The modified Shepp-Logan head phantom (Toft's contrast-enhanced table; from memory).
Phantom head() {
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

ImageF real_part(const ImageC& x) {
  ImageF out(x.rows(), x.cols());
  for (Index k = 0; k < x.size(); ++k) out.data()[k] = x.data()[k].real();
  return out;
}

ImageF truth_of(const Measurement& m) {
  ImageF out(m.ny, m.nx);
  for (Index k = 0; k < out.size(); ++k) out.data()[k] = m.truth->data[static_cast<size_t>(k)].real();
  return out;
}

TEST(PixelMaskOperator, IsSelfAdjointAndKeepsOnlyTheMaskedPixels) {
  Rng rng(3);
  NdArray<uint8_t> mask(Shape{13, 17}, 0);
  for (auto& v : mask.data) v = rng.uniform() < 0.4 ? 1 : 0;
  const PixelMaskOperator op(mask);
  const AdjointReport a = check_adjoint(op, rng);
  EXPECT_LT(a.relative_error, 1e-6) << a.to_string();
  VecC x = VecC::Constant(13 * 17, cfloat(2.0f, -1.0f)), y;
  op.apply(x, y);
  Index kept = 0;
  for (Index p = 0; p < x.size(); ++p) {
    EXPECT_EQ(y[p], mask.data[static_cast<size_t>(p)] ? x[p] : cfloat(0.0f, 0.0f));
    kept += mask.data[static_cast<size_t>(p)];
  }
  EXPECT_EQ(op.kept(), kept);
}

TEST(ImageProblem, DenoiseAddsNoiseOfTheGivenStdToEveryPixel) {
  const ImageC object = rasterize(head(), 128, 128);
  ImageProblemOptions o;
  o.noise_sigma = 0.05;
  o.seed = 7;
  const Measurement m = simulate_image_problem(Modality::kDenoise, object, 1.0, o);
  ASSERT_TRUE(m.image);
  EXPECT_EQ(m.modality, Modality::kDenoise);
  EXPECT_EQ(m.image->kept_fraction, 1.0);
  double sum = 0, sum2 = 0;
  for (Index p = 0; p < 128 * 128; ++p) {
    const double d = m.image->observed.data[static_cast<size_t>(p)] - object.data()[p].real();
    sum += d;
    sum2 += d * d;
  }
  const double n = 128.0 * 128.0, mean = sum / n, sd = std::sqrt(sum2 / n - mean * mean);
  EXPECT_NEAR(sd, 0.05, 0.05 * 0.03);  // 16384 draws: the std's relative error ~ 1/sqrt(2n) = 0.6 %
  EXPECT_NEAR(mean, 0.0, 0.05 * 0.03);
  // Same seed, same bytes; another seed, other noise.
  EXPECT_EQ(simulate_image_problem(Modality::kDenoise, object, 1.0, o).image->observed.data, m.image->observed.data);
  o.seed = 8;
  EXPECT_NE(simulate_image_problem(Modality::kDenoise, object, 1.0, o).image->observed.data, m.image->observed.data);
}

TEST(ImageProblem, InpaintKeepsTheRequestedFractionOfPixels) {
  const ImageC object = rasterize(head(), 96, 96);
  ImageProblemOptions o;
  o.keep = 0.3;
  o.seed = 2;
  const Measurement r = simulate_image_problem(Modality::kInpaint, object, 1.0, o);
  EXPECT_NEAR(r.image->kept_fraction, 0.3, 0.02);
  EXPECT_EQ(r.image->pattern, "random");
  for (Index p = 0; p < 96 * 96; ++p)
    if (!r.image->pixel_mask.data[static_cast<size_t>(p)]) {
      EXPECT_EQ(r.image->observed.data[static_cast<size_t>(p)], 0.0f);
    }
  o.pattern = PixelPattern::kBlocks;
  o.keep = 0.6;
  const Measurement b = simulate_image_problem(Modality::kInpaint, object, 1.0, o);
  EXPECT_EQ(b.image->pattern, "blocks");
  EXPECT_NEAR(b.image->kept_fraction, 0.6, 1.0 / (96 * 96) + 1e-12);
}

TEST(ImageProblem, BadOptionsAreReportedByFieldPath) {
  const ImageC object = rasterize(head(), 32, 32);
  auto fields = [&](Modality mod, const ImageProblemOptions& o) {
    std::vector<std::string> out;
    for (const FieldError& e : o.validate(mod, Shape{32, 32})) out.push_back(e.field);
    return out;
  };
  ImageProblemOptions o;
  o.noise_sigma = -1;
  EXPECT_EQ(fields(Modality::kDenoise, o), std::vector<std::string>{"denoise.noise_sigma"});
  o.keep = 0.0;
  EXPECT_EQ(fields(Modality::kInpaint, o), (std::vector<std::string>{"inpaint.noise_sigma", "inpaint.keep"}));
  o = {};
  o.keep = 1.5;
  EXPECT_EQ(fields(Modality::kInpaint, o), std::vector<std::string>{"inpaint.keep"});
  o = {};
  o.pattern = PixelPattern::kFile;
  o.pixel_mask = NdArray<uint8_t>(Shape{32, 31}, 1);
  EXPECT_EQ(fields(Modality::kInpaint, o), std::vector<std::string>{"inpaint.pixel_mask"});
  o.pixel_mask = NdArray<uint8_t>(Shape{32, 32}, 0);
  EXPECT_EQ(fields(Modality::kInpaint, o), std::vector<std::string>{"inpaint.pixel_mask"});
  o.keep = 1.5;  // not used with a pixel mask
  o.pixel_mask.data[5] = 1;
  EXPECT_TRUE(fields(Modality::kInpaint, o).empty());
  EXPECT_THROW(simulate_image_problem(Modality::kCt, object, 1.0, {}), InputError);
  ImageProblemOptions bad;
  bad.keep = 2;
  try {
    simulate_image_problem(Modality::kInpaint, object, 1.0, bad);
    ADD_FAILURE() << "keep 2 accepted";
  } catch (const InvalidFields& e) {
    ASSERT_EQ(e.errors().size(), 1u);
    EXPECT_EQ(e.errors()[0].field, "inpaint.keep");
  }
}

TEST(ImageProblem, MeasurementFileRoundTripAndZeroFilledIsTheObservedImage) {
  const ImageC object = rasterize(head(), 40, 48);
  ImageProblemOptions o;
  o.noise_sigma = 0.02;
  o.keep = 0.5;
  o.seed = 4;
  const Measurement m = simulate_image_problem(Modality::kInpaint, object, 0.5, o);
  const std::string path = (std::filesystem::temp_directory_path() / "recofold_inpaint_roundtrip.h5").string();
  write_measurement_file(path, m);
  const Measurement r = read_measurement_file(path);
  std::filesystem::remove(path);
  EXPECT_EQ(r.modality, Modality::kInpaint);
  ASSERT_TRUE(r.image);
  EXPECT_EQ(r.image->observed.data, m.image->observed.data);
  EXPECT_EQ(r.image->pixel_mask.data, m.image->pixel_mask.data);
  EXPECT_EQ(r.image->noise_sigma, 0.02);
  EXPECT_EQ(r.image->pattern, "random");
  EXPECT_EQ(r.image->kept_fraction, m.image->kept_fraction);
  EXPECT_EQ(r.pixel_spacing_mm[0], 0.5);
  ASSERT_TRUE(r.truth);
  EXPECT_EQ(r.truth->data, m.truth->data);

  ReconSpec zf;
  zf.method = Method::kZeroFilled;
  const Reconstruction z = reconstruct(r, zf);
  for (Index p = 0; p < 40 * 48; ++p) EXPECT_EQ(z.image.data()[p], cfloat(r.image->observed.data[static_cast<size_t>(p)], 0.0f));
  ReconSpec fbp;
  fbp.method = Method::kFbp;
  EXPECT_THROW(reconstruct(r, fbp), InvalidFields);
}

TEST(ImageProblem, TvDenoisingWithTheDiscrepancyRuleBeatsTheNoisyImage) {
  const ImageC object = rasterize(head(), 96, 96);
  ImageProblemOptions o;
  o.noise_sigma = 0.1;
  o.seed = 11;
  const Measurement m = simulate_image_problem(Modality::kDenoise, object, 1.0, o);
  const ImageF truth = truth_of(m);
  ReconSpec zf;
  zf.method = Method::kZeroFilled;
  const double noisy = psnr(truth, real_part(reconstruct(m, zf).image));
  ReconSpec tv;
  tv.method = Method::kPdhg;
  tv.prior.kind = PriorKind::kTv;
  const Reconstruction r = reconstruct(m, tv);
  const double denoised = psnr(truth, real_part(r.image));
  std::printf("denoise sigma 0.1: noisy %.2f dB, PDHG-TV (lambda %.4g by %s) %.2f dB\n", noisy, r.lambda.value,
              r.lambda.rule_name.c_str(), denoised);
  EXPECT_EQ(r.lambda.rule_name, "discrepancy");
  EXPECT_GE(denoised, noisy + 5.0);
}

TEST(ImageProblem, TvInpaintingOfHalfThePixelsBeatsTheObservedImageByTenDecibels) {
  const ImageC object = rasterize(head(), 256, 256);
  ImageProblemOptions o;
  o.noise_sigma = 0.01;
  o.keep = 0.5;
  o.seed = 1;
  const Measurement m = simulate_image_problem(Modality::kInpaint, object, 1.0, o);
  const ImageF truth = truth_of(m);
  ReconSpec zf;
  zf.method = Method::kZeroFilled;
  const double observed = psnr(truth, real_part(reconstruct(m, zf).image));
  ReconSpec tv;  // FISTA's defaults on inpaint: TV, lambda by the discrepancy rule
  tv.method = Method::kFista;
  const Reconstruction r = reconstruct(m, tv);
  EXPECT_EQ(r.spec.prior.kind, PriorKind::kTv);
  const double inpainted = psnr(truth, real_part(r.image));
  std::printf("inpaint 256^2, 50 %% kept, sigma 0.01: observed %.2f dB, FISTA-TV (lambda %.4g by %s) %.2f dB\n", observed,
              r.lambda.value, r.lambda.rule_name.c_str(), inpainted);
  EXPECT_GE(inpainted, observed + 10.0);
}

}  // namespace
}  // namespace recofold
