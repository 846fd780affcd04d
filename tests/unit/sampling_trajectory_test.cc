// SPDX-License-Identifier: Apache-2.0
// Unit tests of trajectory design (radial, golden and tiny golden angle, spiral under gradient limits) and analysis.
#include <gtest/gtest.h>

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/sampling/trajectory.h"
#include "recofold/sampling/trajectory_analysis.h"

namespace recofold {
namespace {

constexpr double kPi = 3.14159265358979323846;

TEST(Trajectory, GoldenAngleIs111Point246DegreesAndTinyGoldenAnglesFollowWundrak) {
  EXPECT_NEAR(tiny_golden_angle_rad(1) * 180.0 / kPi, 111.246, 5e-4);
  EXPECT_NEAR(tiny_golden_angle_rad(2) * 180.0 / kPi, 68.754, 5e-4);
  EXPECT_NEAR(tiny_golden_angle_rad(5) * 180.0 / kPi, 32.0397, 5e-4);
  EXPECT_NEAR(tiny_golden_angle_rad(7) * 180.0 / kPi, 23.6281, 5e-4);
  TrajectoryOptions o;
  o.kind = TrajectoryKind::kRadialGolden;
  o.ny = o.nx = 32;
  o.spokes = 5;
  const Trajectory t = make_trajectory(o);
  ASSERT_EQ(t.readout_angles_rad.size(), 5u);
  for (int s = 1; s < 5; ++s) {
    double step = t.readout_angles_rad[static_cast<size_t>(s)] - t.readout_angles_rad[static_cast<size_t>(s - 1)];
    if (step < 0) step += 2 * kPi;
    EXPECT_NEAR(step * 180.0 / kPi, 111.246, 5e-4);
  }
}

TEST(Trajectory, RadialSpokesStayInTheBandAndPassThroughTheCentre) {
  TrajectoryOptions o;
  o.kind = TrajectoryKind::kRadial;
  o.ny = 64;
  o.nx = 48;  // non-square: spokes reach min/2
  o.spokes = 10;
  const Trajectory t = make_trajectory(o);
  EXPECT_EQ(t.points(), 10 * 96);
  EXPECT_EQ(t.readouts, 10);
  EXPECT_EQ(t.samples_per_readout, 96);
  EXPECT_EQ(t.dcf_method, "ramp");
  ASSERT_EQ(t.dcf.size(), static_cast<size_t>(t.points()));
  double kmax = 0.0;
  for (Index j = 0; j < t.points(); ++j) {
    EXPECT_LE(std::abs(t.kx[j]), 24.0);
    EXPECT_LE(std::abs(t.ky[j]), 32.0);
    kmax = std::max(kmax, std::hypot(t.kx[j], t.ky[j]));
  }
  EXPECT_NEAR(kmax, 24.0, 1e-9);
  EXPECT_EQ(t.kx[48], 0.0);  // sample R/2 of every spoke is k = 0
  EXPECT_EQ(t.ky[48], 0.0);
  for (int s = 0; s < 10; ++s) EXPECT_NEAR(t.readout_angles_rad[static_cast<size_t>(s)], kPi * s / 10, 1e-12);
  o.spokes = 0;  // default: ceil(pi n / 2)
  EXPECT_EQ(make_trajectory(o).readouts, 76);
}

// The spiral waveform checked against the limits by finite differences of
// the stored gradient and, independently, of the k-space samples.
TEST(Trajectory, SpiralGradientAndSlewStayWithinTheLimitsAndTheSpiralReachesKmax) {
  for (double vd : {1.0, 3.0}) {
    TrajectoryOptions o;
    o.kind = TrajectoryKind::kSpiral;
    o.ny = o.nx = 128;
    o.interleaves = 8;
    o.fov_mm = 220.0;
    o.max_gradient_mT_per_m = 30.0;
    o.max_slew_T_per_m_per_s = 120.0;
    o.vd_edge = vd;
    const Trajectory t = make_trajectory(o);
    const NdArray<float>& g = t.gradient_mT_per_m;
    ASSERT_EQ(g.shape.rank(), 2);
    const Index steps = g.shape[0];
    const double dt = o.raster_us * 1e-6;
    double gx_prev = 0.0, gy_prev = 0.0, peak_g = 0.0, peak_s = 0.0;
    for (Index i = 0; i < steps; ++i) {
      const double gx = g.data[static_cast<size_t>(2 * i)] * 1e-3, gy = g.data[static_cast<size_t>(2 * i + 1)] * 1e-3;
      peak_g = std::max(peak_g, std::hypot(gx, gy));
      peak_s = std::max(peak_s, std::hypot(gx - gx_prev, gy - gy_prev) / dt);
      gx_prev = gx;
      gy_prev = gy;
    }
    EXPECT_LE(peak_g, 30e-3 * (1 + 1e-5)) << "vd " << vd;
    EXPECT_LE(peak_s, 120.0 * (1 + 1e-5)) << "vd " << vd;
    EXPECT_GT(peak_g, 0.8 * 30e-3) << "the design should use the gradient it has";
    // From the samples (first interleaf): gradient = dk/dt / γ̄ with k in cycles/m.
    const Index r = t.samples_per_readout;
    const double dw = o.dwell_us * 1e-6, fov = o.fov_mm * 1e-3;
    double peak_gk = 0.0;
    for (Index i = 1; i < r; ++i) {
      const double dkx = (t.kx[i] - t.kx[i - 1]) / fov, dky = (t.ky[i] - t.ky[i - 1]) / fov;
      peak_gk = std::max(peak_gk, std::hypot(dkx, dky) / dw / kGammaBarHzPerT);
    }
    EXPECT_LE(peak_gk, 30e-3 * (1 + 1e-4)) << "vd " << vd;
    // k-max: n/2 cycles per FOV, reached within one dwell step.
    double kmax = 0.0;
    for (Index j = 0; j < t.points(); ++j) kmax = std::max(kmax, std::hypot(t.kx[j], t.ky[j]));
    EXPECT_LE(kmax, 64.0 + 1e-9);
    EXPECT_GE(kmax, 64.0 - 30e-3 * kGammaBarHzPerT * dw * fov) << "vd " << vd;
    EXPECT_EQ(t.points(), 8 * r);
    EXPECT_EQ(t.dcf_method, "pipe-menon");
  }
}

TEST(Trajectory, VariableDensitySpiralIsSparserAtTheEdgeAndShorter) {
  TrajectoryOptions o;
  o.kind = TrajectoryKind::kSpiral;
  o.ny = o.nx = 96;
  o.interleaves = 6;
  const Trajectory uniform = make_trajectory(o);
  o.vd_edge = 4.0;
  const Trajectory vd = make_trajectory(o);
  EXPECT_LT(vd.points(), uniform.points());
  const TrajectoryAnalysis au = analyse_trajectory(uniform), av = analyse_trajectory(vd);
  const size_t last = au.density.size() - 3;  // near the edge, away from the final partial turn
  EXPECT_GT(av.density[1] / av.density[last], 2.0 * au.density[1] / au.density[last]);
}

TEST(Trajectory, RejectsBadOptionsNamingTheField) {
  TrajectoryOptions o;
  o.kind = TrajectoryKind::kSpiral;
  o.max_slew_T_per_m_per_s = -1.0;
  try {
    make_trajectory(o);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "trajectory.max_slew_T_per_m_per_s");
  }
  o = TrajectoryOptions{};
  o.kind = TrajectoryKind::kSpiral;
  o.dcf = DcfMethod::kRadialRamp;
  EXPECT_THROW(make_trajectory(o), InputError);
  o = TrajectoryOptions{};
  o.tiny_golden = 0;
  EXPECT_FALSE(o.validate().empty());
}

TEST(Trajectory, UserPointsAreCheckedAndGetPipeMenonWeights) {
  VecD kx(4), ky(4);
  kx << 0, 1, -2, 3;
  ky << 0, 2, 1, -3;
  const Trajectory t = trajectory_from_points(16, 16, kx, ky, {});
  EXPECT_EQ(t.dcf.size(), 4u);
  EXPECT_EQ(t.dcf_method, "pipe-menon");
  EXPECT_THROW(trajectory_from_points(16, 16, kx, ky, {1.0f, 2.0f}, "u.h5"), InputError);
  try {
    trajectory_from_points(16, 16, kx, ky, {1.0f, 2.0f}, "u.h5");
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/trajectory/dcf");
    EXPECT_EQ(e.file(), "u.h5");
  }
  kx[3] = 9.0;  // > 16/2
  EXPECT_THROW(trajectory_from_points(16, 16, kx, ky, {}), InputError);
}

TEST(TrajectoryAnalysis, FullySampledRadialHasAUnitPeakAndANarrowMainLobe) {
  TrajectoryOptions o;
  o.kind = TrajectoryKind::kRadial;
  o.ny = o.nx = 64;
  const Trajectory full = make_trajectory(o);  // pi n / 2 spokes
  const TrajectoryAnalysis a = analyse_trajectory(full);
  // The disc of radius n/2 covers π/4 of the square's area: peak ≈ π/4.
  EXPECT_NEAR(a.psf_peak, kPi / 4, 0.03);
  EXPECT_NEAR(a.dcf_area / (64.0 * 64.0), kPi / 4, 0.03);
  EXPECT_GT(a.main_lobe_radius_px, 0.9);
  EXPECT_LT(a.main_lobe_radius_px, 2.1);
  o.spokes = 16;  // heavily undersampled: streaks raise the side-lobes
  const TrajectoryAnalysis u = analyse_trajectory(make_trajectory(o));
  EXPECT_GT(u.psf_sidelobe_ratio, a.psf_sidelobe_ratio);
  EXPECT_NEAR(u.cartesian_acceleration, 64.0 * 64.0 / (16 * 128), 1e-9);
  const ImageF pic = trajectory_picture(u);
  EXPECT_EQ(pic.cols(), 2 * 64 + 4);
  EXPECT_GE(pic.minCoeff(), 0.0f);
  EXPECT_LE(pic.maxCoeff(), 1.0f);
  const std::string json = u.to_json();
  for (const char* key : {"\"psf_sidelobe_db\"", "\"main_lobe_radius_px\"", "\"density_profile\"", "\"cartesian_acceleration\""})
    EXPECT_NE(json.find(key), std::string::npos) << key;
}

}  // namespace
}  // namespace recofold
