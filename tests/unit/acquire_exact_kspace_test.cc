// SPDX-License-Identifier: Apache-2.0
// Unit tests of exact k-space at arbitrary points: the Cartesian limit and convergence of finer rasters to it.
#include <gtest/gtest.h>

#include <cmath>

#include "recofold/acquire/exact_kspace.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/nufft.h"
#include "recofold/phantom/fourier.h"
#include "recofold/phantom/raster.h"

namespace recofold {
namespace {

constexpr double kPi = 3.14159265358979323846;

// Shepp-Logan geometry with the higher-contrast intensities (DEVELOPERS.md "Sources"), plus a
// complex phase so that conjugate symmetry cannot hide a sign error.
Phantom head(bool with_phase) {
  const double t[10][6] = {{1.0, .69, .92, 0, 0, 0},     {-.8, .6624, .874, 0, -.0184, 0},
                           {-.2, .11, .31, .22, 0, -18}, {-.2, .16, .41, -.22, 0, 18},
                           {.1, .21, .25, 0, .35, 0},    {.1, .046, .046, 0, .1, 0},
                           {.1, .046, .046, 0, -.1, 0},  {.1, .046, .023, -.08, -.605, 0},
                           {.1, .023, .023, 0, -.606, 0}, {.1, .023, .046, .06, -.605, 0}};
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
  if (with_phase) {
    p.phase0_rad = 0.4;
    p.phase_gx = 0.3;
    p.phase_gy = -0.2;
  }
  return p;
}

void golden_radial(Index n, int spokes, Index readout, VecD& kx, VecD& ky) {
  kx.resize(spokes * readout);
  ky.resize(spokes * readout);
  const double g = kPi * (std::sqrt(5.0) - 1.0) / 2.0;
  for (int s = 0; s < spokes; ++s)
    for (Index i = 0; i < readout; ++i) {
      const double r = (i - readout / 2) * static_cast<double>(n) / readout;
      kx[s * readout + i] = r * std::cos(s * g);
      ky[s * readout + i] = r * std::sin(s * g);
    }
}

TEST(ExactKspace, AtIntegerPointsEqualsTheCartesianExactKspace) {
  for (auto [ny, nx] : {std::pair<Index, Index>{16, 16}, {15, 18}}) {
    const Phantom p = head(true);
    VecD kx(ny * nx), ky(ny * nx);
    for (Index u = 0; u < ny; ++u)
      for (Index v = 0; v < nx; ++v) {
        kx[u * nx + v] = static_cast<double>(v - nx / 2);
        ky[u * nx + v] = -static_cast<double>(u - ny / 2);
      }
    const NdArray<cfloat> y = exact_kspace_at_points(p, ny, nx, kx, ky);
    const ImageC grid = kspace_on_grid(p, static_cast<int>(ny), static_cast<int>(nx));
    double err = 0.0, ref = 0.0;
    for (Index i = 0; i < ny * nx; ++i) {
      err += std::norm(y.data[static_cast<size_t>(i)] - grid.data()[i]);
      ref += std::norm(grid.data()[i]);
    }
    EXPECT_LT(std::sqrt(err / ref), 1e-6) << ny << "x" << nx;
  }
}

// Multi-coil exact k-space against the NUFFT of (object x coil map) rastered
// q times finer, corrected for the fine pixels' box average and grid offset:
// the error must fall as q grows and be small at q = 16.
TEST(ExactKspace, MultiCoilMatchesFinerRastersAsTheOversamplingGrows) {
  const Index n = 32;
  const Phantom p = head(false);
  CoilArrayOptions o;
  o.coils = 8;
  const CoilFourierSeries series = fit_coil_fourier_series(o);
  VecD kx, ky;
  golden_radial(n, 24, 2 * n, kx, ky);
  const Index m = kx.size();
  const NdArray<cfloat> exact = exact_kspace_at_points(p, n, n, kx, ky, &series);
  ASSERT_EQ(exact.shape, (Shape{8, m}));
  double previous = 1e300, last = 0.0;
  for (int q : {2, 4, 8, 16}) {
    const Index f = q * n;
    const ImageC fine = rasterize(p, static_cast<int>(f), static_cast<int>(f));
    const NdArray<cfloat> maps = coil_series_maps(series, f, f);
    NufftOptions no;
    no.epsilon = 1e-6;
    const NufftPlan plan(f, f, kx, ky, no);
    std::vector<cfloat> prod(static_cast<size_t>(f * f)), y(static_cast<size_t>(m));
    double err = 0.0, ref = 0.0;
    for (int c = 0; c < 8; ++c) {
      for (Index i = 0; i < f * f; ++i) prod[static_cast<size_t>(i)] = fine.data()[i] * maps.data[static_cast<size_t>(c * f * f + i)];
      plan.forward(prod.data(), y.data());
      for (Index j = 0; j < m; ++j) {
        // Scale sqrt(N_fine)/sqrt(N) = q; pixel-centre offset 1/2 of a fine vs a coarse pixel; box average.
        const double shift = 2.0 * kPi * 0.5 * (kx[j] - ky[j]) * (1.0 / n - 1.0 / f);
        auto sinc = [](double x) { return std::abs(x) < 1e-12 ? 1.0 : std::sin(kPi * x) / (kPi * x); };
        const double box = sinc(kx[j] / f) * sinc(ky[j] / f);
        const cdouble approx = cdouble(y[static_cast<size_t>(j)]) * std::polar(1.0 / (q * box), shift);
        const cdouble want = exact.data[static_cast<size_t>(c * m + j)];
        err += std::norm(approx - want);
        ref += std::norm(want);
      }
    }
    const double rel = std::sqrt(err / ref);
    EXPECT_LT(rel, previous) << "q " << q;
    previous = rel;
    last = rel;
  }
  EXPECT_LT(last, 5e-3);
}

}  // namespace
}  // namespace recofold
