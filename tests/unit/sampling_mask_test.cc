// SPDX-License-Identifier: Apache-2.0
// Unit tests of the sampling masks and their analysis.
#include <gtest/gtest.h>

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/mask_analysis.h"

namespace recofold {
namespace {

constexpr double kPi = 3.14159265358979323846;

MaskOptions opts(MaskPattern p, double r, Index ny = 256, Index nx = 256) {
  MaskOptions o;
  o.pattern = p;
  o.acceleration = r;
  o.ny = ny;
  o.nx = nx;
  o.seed = 5;
  return o;
}

TEST(Masks, EveryPatternHitsTheRequestedAccelerationWithinOnePercent) {
  for (MaskPattern p : {MaskPattern::kLinesUniform, MaskPattern::kLinesVd, MaskPattern::kPointsVd,
                        MaskPattern::kPoissonDisc, MaskPattern::kRadial, MaskPattern::kRadialGolden}) {
    for (double r : {2.0, 4.0, 8.0}) {
      const SamplingMask m = make_mask(opts(p, r));
      EXPECT_NEAR(m.achieved_acceleration / r, 1.0, 0.01) << to_string(p) << " R=" << r;
      EXPECT_EQ(m.mask.shape, (Shape{256, 256}));
    }
  }
}

TEST(Masks, NonSquareGridsAlsoHitTheAcceleration) {
  for (MaskPattern p : {MaskPattern::kPointsVd, MaskPattern::kPoissonDisc, MaskPattern::kRadialGolden}) {
    const SamplingMask m = make_mask(opts(p, 4.0, 160, 224));
    EXPECT_NEAR(m.achieved_acceleration / 4.0, 1.0, 0.01) << to_string(p);
  }
}

TEST(Masks, SameSeedGivesTheSameMaskAndAnotherSeedADifferentOne) {
  for (MaskPattern p : {MaskPattern::kLinesVd, MaskPattern::kPointsVd, MaskPattern::kPoissonDisc}) {
    MaskOptions o = opts(p, 4.0, 96, 96);
    const auto a = make_mask(o), b = make_mask(o);
    EXPECT_EQ(a.mask.data, b.mask.data) << to_string(p);
    o.seed = 6;
    EXPECT_NE(make_mask(o).mask.data, a.mask.data) << to_string(p);
  }
}

TEST(Masks, LinePatternsSampleWholeRowsAndKeepTheCentre) {
  for (MaskPattern p : {MaskPattern::kLinesUniform, MaskPattern::kLinesVd}) {
    MaskOptions o = opts(p, 4.0);
    o.center_fraction = 0.08;
    const SamplingMask m = make_mask(o);
    EXPECT_EQ(m.center_rows, 20);
    for (Index r = 0; r < 256; ++r) {
      int sum = 0;
      for (Index c = 0; c < 256; ++c) sum += m.mask.data[static_cast<size_t>(r * 256 + c)];
      EXPECT_TRUE(sum == 0 || sum == 256) << "row " << r;
      if (r >= 118 && r < 138) {
        EXPECT_EQ(sum, 256) << "centre row " << r;
      }
    }
  }
}

TEST(Masks, UniformLinesWithoutCentreAreEquispacedThroughDc) {
  MaskOptions o = opts(MaskPattern::kLinesUniform, 4.0, 64, 8);
  o.center_fraction = 0.0;
  const SamplingMask m = make_mask(o);
  for (Index r = 0; r < 64; ++r) EXPECT_EQ(m.mask.data[static_cast<size_t>(r * 8)], (r % 4 == 0) ? 1 : 0) << r;
}

TEST(Masks, PoissonDiscRespectsTheMinimumDistance) {
  MaskOptions o = opts(MaskPattern::kPoissonDisc, 6.0, 128, 128);
  o.center_fraction = 0.0;
  const SamplingMask m = make_mask(o);
  const double r0 = m.numbers.at("poisson_radius_px");
  auto radius = [&](Index iy, Index ix) {
    const double u = (iy - 64) / 64.0, v = (ix - 64) / 64.0;
    return r0 * (1.0 + o.radius_growth * std::min(1.0, std::sqrt(u * u + v * v) / std::sqrt(2.0)));
  };
  std::vector<std::pair<Index, Index>> pts;
  for (Index iy = 0; iy < 128; ++iy)
    for (Index ix = 0; ix < 128; ++ix)
      if (m.mask.data[static_cast<size_t>(iy * 128 + ix)]) pts.push_back({iy, ix});
  Index violations = 0;
  for (size_t i = 0; i < pts.size(); ++i)
    for (size_t j = i + 1; j < pts.size(); ++j) {
      const double dy = double(pts[i].first - pts[j].first), dx = double(pts[i].second - pts[j].second);
      const double need = std::max(radius(pts[i].first, pts[i].second), radius(pts[j].first, pts[j].second));
      if (dy * dy + dx * dx < need * need * (1 - 1e-9)) ++violations;
    }
  EXPECT_EQ(violations, 0);
  EXPECT_GT(r0, 0.5);
}

TEST(Masks, PoissonDiscIsDenserInTheCentre) {
  MaskOptions o = opts(MaskPattern::kPoissonDisc, 6.0, 128, 128);
  o.center_fraction = 0.0;
  const SamplingMask m = make_mask(o);
  int inner = 0, outer = 0, n_in = 0, n_out = 0;
  for (Index iy = 0; iy < 128; ++iy)
    for (Index ix = 0; ix < 128; ++ix) {
      const double r = std::hypot(iy - 64.0, ix - 64.0);
      const int v = m.mask.data[static_cast<size_t>(iy * 128 + ix)];
      if (r < 20) inner += v, ++n_in;
      if (r > 50 && r < 64) outer += v, ++n_out;
    }
  EXPECT_GT(double(inner) / n_in, 2.0 * double(outer) / n_out);
}

TEST(Masks, GoldenAngleSpokesAdvanceBy111Point246Degrees) {
  MaskOptions o = opts(MaskPattern::kRadialGolden, 1.0, 128, 128);
  o.spokes = 32;
  const SamplingMask m = make_mask(o);
  ASSERT_EQ(m.spoke_angles_rad.size(), 32u);
  for (size_t s = 1; s < 32; ++s) {
    double d = (m.spoke_angles_rad[s] - m.spoke_angles_rad[s - 1]) * 180.0 / kPi;
    d = std::fmod(d + 720.0, 360.0);
    EXPECT_NEAR(d, 111.246, 5e-4) << "spoke " << s;  // Winkelmann et al. 2007
  }
  EXPECT_EQ(m.requested_acceleration, 0.0);
  EXPECT_GT(m.achieved_acceleration, 1.0);
}

TEST(Masks, UniformRadialSpokesAreEquallySpacedOverHalfATurn) {
  MaskOptions o = opts(MaskPattern::kRadial, 1.0, 64, 64);
  o.spokes = 10;
  const SamplingMask m = make_mask(o);
  for (size_t s = 0; s < 10; ++s) EXPECT_NEAR(m.spoke_angles_rad[s], s * kPi / 10, 1e-12);
  EXPECT_EQ(m.mask.data[static_cast<size_t>(32 * 64 + 32)], 1);
}

TEST(Masks, RejectsAccelerationOutsideOneToSixtyFour) {
  for (double r : {0.5, 65.0, std::nan("")}) {
    try {
      make_mask(opts(MaskPattern::kLinesVd, r));
      FAIL() << "R=" << r;
    } catch (const InputError& e) {
      EXPECT_EQ(e.field(), "mask.accel");
    }
  }
}

TEST(Masks, RejectsACentreLargerThanTheSampleBudget) {
  MaskOptions o = opts(MaskPattern::kLinesVd, 8.0);
  o.center_fraction = 0.3;
  try {
    make_mask(o);
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "mask.center");
  }
}

TEST(Masks, SpecFileGivesTheSameOptionsAsFlags) {
  const Config cfg = Config::parse(
      "pattern = \"poisson-disc\"\nsize = [64, 80]\naccel = 6.0\ncenter = 0.1\nseed = 3\nradius_growth = 1.5\n",
      "spec.toml");
  const MaskOptions o = mask_options_from_config(cfg);
  EXPECT_EQ(o.pattern, MaskPattern::kPoissonDisc);
  EXPECT_EQ(o.ny, 64);
  EXPECT_EQ(o.nx, 80);
  EXPECT_EQ(o.acceleration, 6.0);
  EXPECT_EQ(o.seed, 3u);
  EXPECT_EQ(o.radius_growth, 1.5);
}

TEST(Masks, SpecFileWithUnknownPatternNamesTheKeyAndLine) {
  const Config cfg = Config::parse("# comment\npattern = \"spiral\"\n", "spec.toml");
  try {
    mask_options_from_config(cfg);
    FAIL();
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "spec.toml");
    EXPECT_NE(std::string(e.what()).find("pattern"), std::string::npos);
    EXPECT_EQ(e.line(), 2);
  }
}

TEST(MaskAnalysis, FullySampledMaskHasNoSideLobes) {
  NdArray<uint8_t> full(Shape{32, 32}, 1);
  const MaskAnalysis a = analyse_mask(full);
  EXPECT_NEAR(a.acceleration, 1.0, 1e-12);
  EXPECT_NEAR(a.psf_peak, 32.0, 1e-3);  // samples / sqrt(N)
  EXPECT_LT(a.psf_sidelobe_ratio, 1e-5);
  EXPECT_LT(a.tpsf_sidelobe_ratio, 1e-4);
  EXPECT_EQ(a.calibration.rows, 32);
}

TEST(MaskAnalysis, RegularLineSkippingAliasesFullyAtAQuarterOfTheFieldOfView) {
  MaskOptions o = opts(MaskPattern::kLinesUniform, 4.0, 64, 64);
  o.center_fraction = 0.0;
  const MaskAnalysis a = analyse_mask(make_mask(o).mask);
  EXPECT_NEAR(a.psf_sidelobe_ratio, 1.0, 1e-4);
  EXPECT_EQ(std::abs(a.psf_sidelobe_dy) % 16, 0);  // aliases at multiples of ny/R, all of equal height
  EXPECT_NE(a.psf_sidelobe_dy, 0);
  EXPECT_EQ(a.psf_sidelobe_dx, 0);
}

TEST(MaskAnalysis, RandomLinesAreMoreIncoherentThanRegularLines) {
  MaskOptions o = opts(MaskPattern::kLinesVd, 4.0, 128, 128);
  const MaskAnalysis random = analyse_mask(make_mask(o).mask);
  o.pattern = MaskPattern::kLinesUniform;
  const MaskAnalysis regular = analyse_mask(make_mask(o).mask);
  EXPECT_LT(random.psf_sidelobe_ratio, regular.psf_sidelobe_ratio);
  EXPECT_LT(random.tpsf_sidelobe_ratio, regular.tpsf_sidelobe_ratio);
  EXPECT_EQ(random.tpsf_levels.size(), 3u);
  EXPECT_NE(random.to_json().find("\"psf_sidelobe_ratio\""), std::string::npos);
}

TEST(MaskAnalysis, PictureHasMaskAndPsfSideBySide) {
  MaskOptions o = opts(MaskPattern::kPointsVd, 4.0, 32, 40);
  const SamplingMask m = make_mask(o);
  const MaskAnalysis a = analyse_mask(m.mask);
  const ImageF pic = mask_picture(m.mask, a);
  EXPECT_EQ(pic.rows(), 32);
  EXPECT_EQ(pic.cols(), 84);
  EXPECT_FLOAT_EQ(pic(16, 40 + 4 + 20), 1.0f);  // PSF peak is white
  EXPECT_GE(pic.minCoeff(), 0.0f);
  EXPECT_LE(pic.maxCoeff(), 1.0f);
}

}  // namespace
}  // namespace recofold
