// SPDX-License-Identifier: Apache-2.0
// Unit tests of the NUFFT, its Toeplitz normal operator, SENSE-NUFFT, density compensation and coil-map series.
#include <gtest/gtest.h>

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/density_compensation.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/nufft.h"

namespace recofold {
namespace {

constexpr double kPi = 3.14159265358979323846;

VecC random_vec(Index n, uint64_t seed) {
  Rng rng(seed);
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(static_cast<float>(rng.normal()), static_cast<float>(rng.normal()));
  return v;
}

struct Points {
  VecD kx, ky;
};

Points random_points(Index ny, Index nx, Index m, uint64_t seed) {
  Rng rng(seed);
  Points p{VecD(m), VecD(m)};
  for (Index j = 0; j < m; ++j) {
    p.kx[j] = rng.uniform(-0.5 * nx, 0.5 * nx);
    p.ky[j] = rng.uniform(-0.5 * ny, 0.5 * ny);
  }
  return p;
}

// Full-diameter spokes at the given angles, `readout` samples from -n/2 in steps n/readout.
Points radial_points(Index n, const std::vector<double>& angles, Index readout, std::vector<double>* positions = nullptr) {
  const Index s_count = static_cast<Index>(angles.size());
  Points p{VecD(s_count * readout), VecD(s_count * readout)};
  std::vector<double> r(static_cast<size_t>(readout));
  for (Index i = 0; i < readout; ++i) r[static_cast<size_t>(i)] = (i - readout / 2) * static_cast<double>(n) / readout;
  for (Index s = 0; s < s_count; ++s)
    for (Index i = 0; i < readout; ++i) {
      p.kx[s * readout + i] = r[static_cast<size_t>(i)] * std::cos(angles[static_cast<size_t>(s)]);
      p.ky[s * readout + i] = r[static_cast<size_t>(i)] * std::sin(angles[static_cast<size_t>(s)]);
    }
  if (positions) *positions = r;
  return p;
}

std::vector<double> uniform_angles(int spokes) {
  std::vector<double> a(static_cast<size_t>(spokes));
  for (int s = 0; s < spokes; ++s) a[static_cast<size_t>(s)] = kPi * s / spokes;
  return a;
}

double rel(const VecC& a, const VecC& b) { return (a - b).norm() / b.norm(); }

TEST(Nufft, AdjointMatchesInnerProductIdentityOnOddEvenAndNonSquareGrids) {
  for (auto [ny, nx] : {std::pair<Index, Index>{32, 32}, {31, 27}, {20, 45}}) {
    for (double sigma : {2.0, 1.25})
      for (NufftKernel kernel : {NufftKernel::kExpSemicircle, NufftKernel::kKaiserBessel}) {
        const Points p = random_points(ny, nx, 700, 3);
        NufftOptions o;
        o.oversampling = sigma;
        o.kernel = kernel;
        const Nufft a(std::make_shared<const NufftPlan>(ny, nx, p.kx, p.ky, o));
        EXPECT_EQ(a.range_shape(), (Shape{700}));
        Rng rng(5);
        const AdjointReport r = check_adjoint(a, rng);
        EXPECT_LT(r.relative_error, 1e-5) << ny << "x" << nx << " sigma " << sigma << ": " << r.to_string();
      }
  }
}

TEST(Nufft, AtIntegerPointsEqualsTheCentredFft) {
  const Index ny = 12, nx = 15;
  Points p{VecD(ny * nx), VecD(ny * nx)};
  for (Index u = 0; u < ny; ++u)
    for (Index v = 0; v < nx; ++v) {
      p.kx[u * nx + v] = static_cast<double>(v - nx / 2);
      p.ky[u * nx + v] = -static_cast<double>(u - ny / 2);  // rows run down, y up
    }
  NufftOptions o;
  o.epsilon = 1e-6;
  const NufftPlan plan(ny, nx, p.kx, p.ky, o);
  const VecC x = random_vec(ny * nx, 9);
  VecC y(ny * nx), ref(ny * nx);
  plan.forward(x.data(), y.data());
  fft2c(x.data(), ref.data(), ny, nx, FftDirection::kForward);
  EXPECT_LT(rel(y, ref), 1e-5);
}

TEST(Nufft, AccuracyImprovesWithSmallerEpsilon) {
  // Against the direct sum in double precision on a small problem.
  const Index ny = 16, nx = 18, m = 300;
  const Points p = random_points(ny, nx, m, 21);
  const VecC x = random_vec(ny * nx, 22);
  Eigen::VectorXcd ref(m);
  for (Index j = 0; j < m; ++j) {
    cdouble s(0.0, 0.0);
    for (Index iy = 0; iy < ny; ++iy)
      for (Index ix = 0; ix < nx; ++ix)
        s += cdouble(x[iy * nx + ix]) *
             std::polar(1.0, -2.0 * kPi * (p.kx[j] * (ix - nx / 2) / nx - p.ky[j] * (iy - ny / 2) / ny));
    ref[j] = s / std::sqrt(double(ny * nx));
  }
  double previous = 1.0;
  for (double eps : {1e-2, 1e-4, 1e-6}) {
    NufftOptions o;
    o.epsilon = eps;
    const NufftPlan plan(ny, nx, p.kx, p.ky, o);
    VecC y(m);
    plan.forward(x.data(), y.data());
    const double err = (y.cast<cdouble>() - ref).norm() / ref.norm();
    EXPECT_LT(err, 10 * eps) << "eps " << eps;
    EXPECT_LT(err, previous) << "eps " << eps;
    previous = err;
  }
}

TEST(Nufft, RejectsPointsOutsideHalfACyclePerPixelAndNonFinitePoints) {
  VecD kx(3), ky(3);
  kx << 0.0, 16.0, -3.0;  // 16 = nx/2 is allowed
  ky << 0.0, 1.0, 2.0;
  EXPECT_NO_THROW(NufftPlan(32, 32, kx, ky));
  kx[2] = 16.5;
  try {
    NufftPlan(32, 32, kx, ky);
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/trajectory/k");
    EXPECT_NE(std::string(e.what()).find("point 2"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("0.5 cycles per pixel"), std::string::npos) << e.what();
  }
  kx[2] = std::nan("");
  EXPECT_THROW(NufftPlan(32, 32, kx, ky), InputError);
  NufftOptions o;
  o.epsilon = 0.5;
  EXPECT_FALSE(o.validate().empty());
  EXPECT_THROW(NufftPlan(32, 32, VecD::Zero(1), VecD::Zero(1), o), InputError);
  o = NufftOptions{};
  o.oversampling = 3.0;
  EXPECT_FALSE(o.validate().empty());
}

TEST(Nufft, ResultDoesNotDependOnTheNumberOfThreads) {
  const Index n = 96;
  const Points p = radial_points(n, uniform_angles(40), 2 * n);
  const NufftPlan plan(n, n, p.kx, p.ky);
  const VecC y = random_vec(p.kx.size(), 4);
  VecC one(n * n), two(n * n);
  set_fft_threads(1);
  plan.adjoint(y.data(), one.data());
  set_fft_threads(2);
  plan.adjoint(y.data(), two.data());
  set_fft_threads(0);
  // Spreading is bitwise independent of threads; FFTW's threaded plans may round differently.
  EXPECT_LT(rel(two, one), 1e-6);
}

TEST(Nufft, KernelFourierTransformMatchesKaiserBesselClosedForm) {
  // ∫ I0(β sqrt(1 - (2z/w)²)) exp(-i2πξz) dz over |z| < w/2
  //   = w sinh(sqrt(β² - (π w ξ)²)) / sqrt(β² - (π w ξ)²)   (from memory; Jackson et al. 1991)
  NufftOptions o;
  o.kernel = NufftKernel::kKaiserBessel;
  const NufftKernelShape s = nufft_kernel_shape(64, 64, o);
  for (double xi : {0.0, 0.1, 0.25, 0.4}) {
    const double q = std::sqrt(s.beta * s.beta - std::pow(kPi * s.width * xi, 2));
    const double closed = s.width * std::sinh(q) / q / std::cyl_bessel_i(0.0, s.beta);
    EXPECT_NEAR(nufft_kernel_fourier(s, xi) / closed, 1.0, 1e-9) << "xi " << xi;
  }
}

TEST(Toeplitz, NormalOperatorMatchesAdjointOfForward) {
  for (auto [ny, nx] : {std::pair<Index, Index>{32, 32}, {25, 36}}) {
    for (double eps : {1e-6, 1e-4}) {
      const Points p = random_points(ny, nx, 1500, 31);
      NufftOptions o;
      o.epsilon = eps;
      const auto plan = std::make_shared<const NufftPlan>(ny, nx, p.kx, p.ky, o);
      const Nufft a(plan);
      const VecC x = random_vec(ny * nx, 32);
      VecC y, direct, toe;
      a.apply(x, y);
      a.adjoint(y, direct);
      a.normal(x, toe);
      // The kernel T is computed at ε = 1e-6 whatever the plan's ε, so the
      // difference is the plan's own error: 1e-4 at ε = 1e-6, ~ε otherwise.
      EXPECT_LT(rel(toe, direct), std::max(1e-4, 10 * eps)) << ny << "x" << nx << " eps " << eps;
    }
  }
}

TEST(Toeplitz, WeightedNormalOperatorMatchesWeightedAdjointOfForward) {
  const Index n = 40;
  std::vector<double> r;
  const Points p = radial_points(n, uniform_angles(24), 2 * n, &r);
  NufftOptions o;
  o.epsilon = 1e-6;
  const NufftPlan plan(n, n, p.kx, p.ky, o);
  const std::vector<float> w = radial_ramp_dcf(uniform_angles(24), r);
  const ToeplitzNormal t(plan, w);
  const VecC x = random_vec(n * n, 33);
  VecC y(p.kx.size()), direct(n * n), toe(n * n);
  plan.forward(x.data(), y.data());
  for (Index j = 0; j < y.size(); ++j) y[j] *= w[static_cast<size_t>(j)];
  plan.adjoint(y.data(), direct.data());
  t.apply(x.data(), toe.data());
  EXPECT_LT(rel(toe, direct), 1e-4);
}

TEST(SenseNufft, AdjointTestAndToeplitzNormalForOneAndEightCoils) {
  const Index ny = 36, nx = 30;
  const Points p = random_points(ny, nx, 900, 41);
  NufftOptions o;
  o.epsilon = 1e-6;
  const auto plan = std::make_shared<const NufftPlan>(ny, nx, p.kx, p.ky, o);
  for (int coils : {1, 8}) {
    CoilArrayOptions c;
    c.coils = coils;
    const SenseNufft e(plan, coils > 1 ? synthetic_coil_maps(c, ny, nx) : NdArray<cfloat>{});
    EXPECT_EQ(e.range_shape(), (Shape{coils, 900}));
    Rng rng(43);
    const AdjointReport r = check_adjoint(e, rng);
    EXPECT_LT(r.relative_error, 1e-5) << coils << " coils: " << r.to_string();
    const VecC x = random_vec(ny * nx, 44);
    VecC y, direct, toe;
    e.apply(x, y);
    e.adjoint(y, direct);
    e.normal(x, toe);
    EXPECT_LT(rel(toe, direct), 1e-4) << coils << " coils";
  }
}

TEST(SenseNufft, CoilsSideBySideGiveTheSameResultAsOneThread) {
  const Index n = 32;
  const Points p = random_points(n, n, 600, 51);
  const auto plan = std::make_shared<const NufftPlan>(n, n, p.kx, p.ky);
  CoilArrayOptions c;
  c.coils = 4;
  const SenseNufft e(plan, synthetic_coil_maps(c, n, n));
  const VecC x = random_vec(n * n, 52);
  VecC y1, y2;
  set_fft_threads(1);
  e.apply(x, y1);
  set_fft_threads(2);
  e.apply(x, y2);
  set_fft_threads(0);
  EXPECT_LT(rel(y2, y1), 1e-6);
}

TEST(DensityCompensation, RadialRampIsPiRadiusOverSpokesForEqualSpacing) {
  const int spokes = 16;
  std::vector<double> r = {-2.0, -1.0, 0.0, 1.0, 2.0};
  const auto w = radial_ramp_dcf(uniform_angles(spokes), r);
  ASSERT_EQ(w.size(), static_cast<size_t>(spokes * 5));
  for (int s = 0; s < spokes; ++s) {
    EXPECT_NEAR(w[static_cast<size_t>(s * 5 + 3)], kPi * 1.0 / spokes, 1e-6);
    EXPECT_NEAR(w[static_cast<size_t>(s * 5 + 0)], kPi * 2.0 / spokes, 1e-6);
    EXPECT_NEAR(w[static_cast<size_t>(s * 5 + 2)], kPi / (4.0 * spokes), 1e-6);  // centre disc of radius 1/2, shared
  }
  EXPECT_THROW(radial_ramp_dcf({}, r), InputError);
  EXPECT_THROW(radial_ramp_dcf({0.0}, {1.0, 0.0}), InputError);
}

TEST(DensityCompensation, GoldenAngleRampCoversTheDiscArea) {
  // The weights of any set of spokes add up to the sampled disc's area,
  // π R² (up to the half-spacing at the ends): the angular gaps add up to π.
  std::vector<double> angles;
  for (int s = 0; s < 37; ++s) angles.push_back(std::fmod(s * kPi * (std::sqrt(5.0) - 1.0) / 2.0, 2 * kPi));
  std::vector<double> r;
  for (int i = -32; i <= 32; ++i) r.push_back(0.5 * i);  // radius 16, spacing 1/2
  const auto w = radial_ramp_dcf(angles, r);
  double total = 0.0;
  for (float v : w) total += v;
  const double outer = 16.0 + 0.25;  // the last sample stands for half a spacing beyond
  EXPECT_NEAR(total / (kPi * outer * outer), 1.0, 0.03);
}

TEST(DensityCompensation, PipeMenonMatchesTheRampAndGriddingRecoversASmoothObject) {
  const Index n = 64;
  const int spokes = 100;  // > π n / 2: fully sampled in angle
  std::vector<double> r;
  const Points p = radial_points(n, uniform_angles(spokes), 2 * n, &r);
  const NufftPlan plan(n, n, p.kx, p.ky);
  const auto ramp = radial_ramp_dcf(uniform_angles(spokes), r);
  const DcfResult pm = pipe_menon_dcf(n, n, p.kx, p.ky);
  EXPECT_GT(pm.iterations, 1);
  // Mid-range radii (away from the centre and the outer edge): within 5%.
  double worst = 0.0;
  for (int s = 0; s < spokes; ++s)
    for (Index i = 0; i < 2 * n; ++i) {
      const double rad = std::abs(r[static_cast<size_t>(i)]);
      if (rad < 4.0 || rad > 26.0) continue;
      const size_t j = static_cast<size_t>(s * 2 * n + i);
      worst = std::max(worst, std::abs(pm.weights[j] / ramp[j] - 1.0));
    }
  EXPECT_LT(worst, 0.05);
  // Gridding a band-limited smooth object: a Gaussian of width 3 pixels.
  VecC x(n * n);
  for (Index iy = 0; iy < n; ++iy)
    for (Index ix = 0; ix < n; ++ix) {
      const double dx = ix - n / 2 + 3.0, dy = iy - n / 2 - 5.0;
      x[iy * n + ix] = cfloat(static_cast<float>(std::exp(-(dx * dx + dy * dy) / 18.0)), 0.0f);
    }
  VecC y(p.kx.size()), g(n * n);
  plan.forward(x.data(), y.data());
  grid_with_dcf(plan, pm.weights, y.data(), g.data());
  EXPECT_LT(rel(g, x), 0.03);
  grid_with_dcf(plan, ramp, y.data(), g.data());
  EXPECT_LT(rel(g, x), 0.03);
}

TEST(DensityCompensation, PipeMenonGivesUnitWeightsOnTheCartesianGrid) {
  const Index n = 32;
  Points p{VecD(n * n), VecD(n * n)};
  for (Index u = 0; u < n; ++u)
    for (Index v = 0; v < n; ++v) {
      p.kx[u * n + v] = v - n / 2;
      p.ky[u * n + v] = u - n / 2;
    }
  const DcfResult pm = pipe_menon_dcf(n, n, p.kx, p.ky);
  // Interior points (the grid's edge has no neighbours beyond it).
  for (Index u = 4; u < n - 4; ++u)
    for (Index v = 4; v < n - 4; ++v) EXPECT_NEAR(pm.weights[static_cast<size_t>(u * n + v)], 1.0, 0.005);
  PipeMenonOptions bad;
  bad.iterations = 0;
  EXPECT_THROW(pipe_menon_dcf(n, n, p.kx, p.ky, bad), InputError);
}

TEST(CoilSeries, FollowsTheLoopModelAndIsExactlyItsOwnSeries) {
  CoilArrayOptions o;
  o.coils = 8;
  const CoilFourierSeries s = fit_coil_fourier_series(o);
  EXPECT_EQ(s.terms(), 49);
  const Index ny = 40, nx = 36;
  const NdArray<cfloat> maps = coil_series_maps(s, ny, nx);
  const NdArray<cfloat> loop = synthetic_coil_maps(o, ny, nx);
  double worst = 0.0, worst_series = 0.0, worst_sos = 0.0;
  const Index n = ny * nx;
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      const double x = -1.0 + (2.0 * ix + 1.0) / nx, y = 1.0 - (2.0 * iy + 1.0) / ny;
      double sos = 0.0;
      for (int c = 0; c < 8; ++c) {
        const size_t i = static_cast<size_t>(c * n + iy * nx + ix);
        worst = std::max(worst, double(std::abs(maps.data[i] - loop.data[i])));
        worst_series = std::max(worst_series, std::abs(cdouble(maps.data[i]) - s.value(c, x, y)));
        sos += std::norm(maps.data[i]);
      }
      worst_sos = std::max(worst_sos, std::abs(sos - 1.0));
    }
  EXPECT_LT(worst, 0.02);          // close to the loop model (maps have |S| up to ~0.7)
  EXPECT_LT(worst_series, 1e-5);   // the raster is the series itself
  EXPECT_LT(worst_sos, 0.05);
  const CoilFourierSeries one = fit_coil_fourier_series(CoilArrayOptions{});
  EXPECT_EQ(one.terms(), 1);
  EXPECT_EQ(one.value(0, 0.3, -0.2), cdouble(1.0, 0.0));
  EXPECT_THROW(fit_coil_fourier_series(o, 7), InputError);
}

}  // namespace
}  // namespace recofold
