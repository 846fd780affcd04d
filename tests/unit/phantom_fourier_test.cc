// SPDX-License-Identifier: Apache-2.0
// Tests of the exact Fourier transform: DC value, Bessel J1, FFT of a fine raster, phase and grid layout.
#include <gtest/gtest.h>

#include <cmath>
#include <iostream>

#include "phantom_test_util.h"
#include "recofold/phantom/fourier.h"
#include "recofold/phantom/raster.h"

namespace recofold {
namespace {

constexpr double kPi = 3.14159265358979323846;

// DFT of a raster at physical frequencies (kx, ky), approximating F:
//   dx dy sum_{iy, ix} r[iy, ix] exp(-i 2 pi (kx x_ix + ky y_iy)),
// separable, so only the few wanted frequencies cost anything.
Eigen::MatrixXcd raster_dft(const ImageC& r, const std::vector<double>& kxs, const std::vector<double>& kys) {
  const int ny = static_cast<int>(r.rows()), nx = static_cast<int>(r.cols());
  const double dx = 2.0 / nx, dy = 2.0 / ny;
  Eigen::MatrixXcd ex(kxs.size(), nx);
  for (size_t m = 0; m < kxs.size(); ++m)
    for (int ix = 0; ix < nx; ++ix) ex(m, ix) = std::polar(1.0, -2.0 * kPi * kxs[m] * (-1.0 + (2.0 * ix + 1.0) / nx));
  // Row transforms: rows x frequencies.
  Eigen::MatrixXcd partial(ny, kxs.size());
  for (int iy = 0; iy < ny; ++iy)
    for (size_t m = 0; m < kxs.size(); ++m) {
      cdouble s = 0.0;
      for (int ix = 0; ix < nx; ++ix) s += ex(m, ix) * cdouble(r(iy, ix));
      partial(iy, m) = s;
    }
  Eigen::MatrixXcd out(kys.size(), kxs.size());
  for (size_t n = 0; n < kys.size(); ++n)
    for (size_t m = 0; m < kxs.size(); ++m) {
      cdouble s = 0.0;
      for (int iy = 0; iy < ny; ++iy)
        s += std::polar(1.0, -2.0 * kPi * kys[n] * (1.0 - (2.0 * iy + 1.0) / ny)) * partial(iy, m);
      out(n, m) = s * dx * dy;
    }
  return out;
}

TEST(PhantomFourier, ValueAtZeroIsSumOfIntensityTimesArea) {
  // Areas: ellipse pi a b; Gaussian blob 2 pi a b (integral of the profile).
  Phantom p = testing::load_repo_phantom("shepp-logan");
  Component blob;
  blob.kind = ComponentKind::kGaussian;
  blob.intensity = cdouble(0.5, -0.25);
  blob.a = 0.07;
  blob.b = 0.02;
  blob.x0 = 0.3;
  blob.phi_deg = 33.0;
  p.components.push_back(blob);
  cdouble expected = 0.0;
  for (const Component& c : p.components)
    expected += c.intensity * (c.kind == ComponentKind::kEllipse ? kPi : 2.0 * kPi) * c.a * c.b;
  const cdouble f0 = fourier_transform(p, 0.0, 0.0);
  EXPECT_NEAR(f0.real(), expected.real(), 1e-6 * std::abs(expected));
  EXPECT_NEAR(f0.imag(), expected.imag(), 1e-6 * std::abs(expected));
}

TEST(PhantomFourier, BesselJ1MatchesStandardLibrary) {
  // Independent check: std::cyl_bessel_j (C++17 special functions, libstdc++).
  double worst = 0.0;
  for (double x = 0.0; x < 400.0; x += 0.0137) worst = std::max(worst, std::abs(bessel_j1(x) - std::cyl_bessel_j(1.0, x)));
  EXPECT_LT(worst, 5e-12);
  EXPECT_NEAR(bessel_j1_over_x(0.0), 0.5, 1e-15);
  EXPECT_NEAR(bessel_j1_over_x(1e-9), 0.5, 1e-15);
  EXPECT_NEAR(bessel_j1(-2.0), -std::cyl_bessel_j(1.0, 2.0), 1e-12);
  // First zero of J1: 3.8317059702075123 (tables, from memory).
  EXPECT_NEAR(bessel_j1(3.8317059702075123), 0.0, 1e-12);
}

TEST(PhantomFourier, MatchesDftOfFineRasterAtLowFrequencies) {
  // Issue 3: FFT of a 2048^2 anti-aliased raster at the lowest 32 x 32
  // frequencies, relative error < 1e-2. The DFT is evaluated directly at those
  // frequencies (k = m/2 cycles per unit, m in [-16, 16)).
  Phantom p = testing::load_repo_phantom("shepp-logan-modified");
  Component blob;
  blob.kind = ComponentKind::kGaussian;
  blob.intensity = 0.3;
  blob.a = 0.05;
  blob.b = 0.02;
  blob.x0 = -0.4;
  blob.y0 = 0.5;
  blob.phi_deg = 25.0;
  p.components.push_back(blob);
  const int n = 2048;
  const ImageC r = rasterize(p, n, n);
  std::vector<double> ks;
  for (int m = -16; m < 16; ++m) ks.push_back(m / 2.0);
  const Eigen::MatrixXcd dft = raster_dft(r, ks, ks);
  double num = 0.0, den = 0.0;
  for (size_t iy = 0; iy < ks.size(); ++iy)
    for (size_t ix = 0; ix < ks.size(); ++ix) {
      const cdouble exact = fourier_transform(p, ks[ix], ks[iy]);
      num += std::norm(dft(iy, ix) - exact);
      den += std::norm(exact);
    }
  const double rel = std::sqrt(num / den);
  std::cout << "relative error of the exact transform vs the 2048^2 raster DFT: " << rel << "\n";
  EXPECT_LT(rel, 1e-2);
  EXPECT_LT(rel, 1e-3);  // it achieves about 6e-5; a miss here means a real regression
}

TEST(PhantomFourier, GlobalLinearPhaseShiftsKSpace) {
  // exp(i(phase0 + 2 pi g.x)) f(x)  <->  exp(i phase0) F(k - g); checked against
  // the DFT of the phased raster, which applies the phase pixel by pixel.
  Phantom p = testing::load_repo_phantom("shepp-logan-modified");
  p.phase0_rad = 0.7;
  p.phase_gx = 1.5;
  p.phase_gy = -0.5;
  const ImageC r = rasterize(p, 1024, 1024);
  const std::vector<double> ks = {-2.0, -0.5, 0.0, 1.5, 3.0};
  const Eigen::MatrixXcd dft = raster_dft(r, ks, ks);
  double num = 0.0, den = 0.0;
  for (size_t iy = 0; iy < ks.size(); ++iy)
    for (size_t ix = 0; ix < ks.size(); ++ix) {
      const cdouble exact = fourier_transform(p, ks[ix], ks[iy]);
      num += std::norm(dft(iy, ix) - exact);
      den += std::norm(exact);
    }
  EXPECT_LT(std::sqrt(num / den), 1e-2);
  EXPECT_NEAR(std::abs(fourier_transform(p, 1.5, -0.5) - std::polar(1.0, 0.7) * fourier_transform(
                  testing::load_repo_phantom("shepp-logan-modified"), 0.0, 0.0)), 0.0, 1e-12);
}

TEST(PhantomFourier, BatchEqualsPointwise) {
  const Phantom p = testing::load_repo_phantom("organ-section");
  Rng rng(5);
  VecD kx(200), ky(200);
  for (int i = 0; i < 200; ++i) {
    kx[i] = rng.uniform(-40.0, 40.0);
    ky[i] = rng.uniform(-40.0, 40.0);
  }
  const Eigen::VectorXcd batch = fourier_transform(p, kx, ky);
  for (int i = 0; i < 200; ++i) EXPECT_EQ(batch[i], fourier_transform(p, kx[i], ky[i]));
}

TEST(PhantomFourier, GridSamplesFollowTheCentredDftLayout) {
  // Element [u, v] = F(m/2, -n/2) sqrt(ny nx)/4 exp(i 2 pi (cx m/nx + cy n/ny)).
  // A real object (values mirrored by Hermitian symmetry) and a phased one
  // (every value computed).
  Phantom real_object = testing::load_repo_phantom("qc-disk");
  Phantom phased = real_object;
  phased.phase0_rad = 0.4;
  phased.phase_gx = 0.75;
  for (const Phantom& p : {real_object, phased}) {
    for (const auto& [ny, nx] : {std::pair<int, int>{16, 16}, {15, 18}, {17, 17}}) {
      const ImageC g = kspace_on_grid(p, ny, nx);
      const double cx = nx % 2 == 0 ? 0.5 : 0.0, cy = ny % 2 == 0 ? 0.5 : 0.0;
      for (int u = 0; u < ny; ++u)
        for (int v = 0; v < nx; ++v) {
          const int m = v - nx / 2, n = u - ny / 2;
          const cdouble expect = fourier_transform(p, m / 2.0, -n / 2.0) * std::sqrt(1.0 * ny * nx) / 4.0 *
                                 std::polar(1.0, 2.0 * kPi * (cx * m / nx + cy * n / ny));
          EXPECT_NEAR(std::abs(cdouble(g(u, v)) - expect), 0.0, 1e-5 * (1.0 + std::abs(expect))) << u << "," << v;
        }
    }
  }
}

TEST(PhantomFourier, InverseDftOfGridSamplesApproximatesTheRaster) {
  // Direct inverse centred DFT of kspace_on_grid at 64^2 against the raster of
  // a smooth (blob-only, so essentially band-limited) object. The raster holds
  // pixel averages, i.e. the object convolved with the pixel box, so the
  // k-space is first multiplied by the box's transform sinc(kx dx) sinc(ky dy).
  Phantom p;
  for (int i = 0; i < 5; ++i) {
    Component c;
    c.kind = ComponentKind::kGaussian;
    c.intensity = 0.2 + 0.1 * i;
    c.a = 0.1 + 0.02 * i;
    c.b = 0.08;
    c.x0 = -0.4 + 0.2 * i;
    c.y0 = 0.3 - 0.15 * i;
    c.phi_deg = 20.0 * i;
    p.components.push_back(c);
  }
  const int n = 64;
  ImageC g = kspace_on_grid(p, n, n);
  const ImageC r = rasterize(p, n, n);
  auto sinc = [](double x) { return x == 0.0 ? 1.0 : std::sin(kPi * x) / (kPi * x); };
  for (int u = 0; u < n; ++u)
    for (int v = 0; v < n; ++v)
      g(u, v) *= static_cast<float>(sinc(grid_frequency(v, n) * 2.0 / n) * sinc(grid_frequency(u, n) * 2.0 / n));
  double num = 0.0, den = 0.0;
  for (int iy = 0; iy < n; ++iy)
    for (int ix = 0; ix < n; ++ix) {
      // numpy: raster = ifftshift(ifft2(fftshift? ...)): with centred indices
      // p = ix - n/2 and q = iy - n/2, x[q, p] = (1/n) sum X[u, v] e^{+i2pi(q n' + p m)/n}.
      cdouble s = 0.0;
      for (int u = 0; u < n; ++u)
        for (int v = 0; v < n; ++v)
          s += cdouble(g(u, v)) * std::polar(1.0, 2.0 * kPi * ((iy - n / 2) * (u - n / 2) + (ix - n / 2) * (v - n / 2)) / n);
      s /= n;
      num += std::norm(s - cdouble(r(iy, ix)));
      den += std::norm(cdouble(r(iy, ix)));
    }
  EXPECT_LT(std::sqrt(num / den), 1e-4);
}

}  // namespace
}  // namespace recofold
