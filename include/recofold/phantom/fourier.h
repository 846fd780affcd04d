// SPDX-License-Identifier: Apache-2.0
// Exact Fourier transform of analytic phantoms at arbitrary k-space points.
//
// Convention: F(k) = integral over the plane of f(x) exp(-i 2 pi k.x) dx, with
// x in units of the [-1,1] square and k in cycles per unit of that square
// (so k = 0.5 is one cycle across the whole square). Values are in
// intensity x unit^2; multiply by Phantom::mm_per_unit()^2 for intensity x mm^2.
//
// Closed forms (DEVELOPERS.md "Sources", "Objects"; written from memory of the standard
// results, checked against scipy.special.j1 and an FFT of a fine raster):
//   ellipse:  rho a b J1(2 pi kappa)/kappa exp(-i 2 pi k.c),
//             kappa = |(a k'x, b k'y)|, k' = R(-phi) k, limit rho pi a b at 0
//   blob:     2 pi rho a b exp(-2 pi^2 (a^2 k'x^2 + b^2 k'y^2)) exp(-i 2 pi k.c)
//   global phase exp(i (phase0 + 2 pi g.x)):  F(k) = exp(i phase0) F0(k - g).
#pragma once

#include "recofold/core/types.h"
#include "recofold/phantom/phantom.h"

namespace recofold {

// Bessel function of the first kind of order one, for x >= 0 (odd extension
// below). Power series below x = 12, Hankel's asymptotic expansion above;
// absolute error below 1e-12 on [0, 1e4] (checked against std::cyl_bessel_j and
// scipy.special.j1 in the tests).
double bessel_j1(double x);

// J1(x)/x with the limit 1/2 at x = 0, accurate for every x >= 0.
double bessel_j1_over_x(double x);

// F of one component at (kx, ky), without any global phase.
cdouble component_fourier(const Component& c, double kx, double ky);

// F of the whole phantom at (kx, ky), global phase included.
cdouble fourier_transform(const Phantom& p, double kx, double ky);

// F at many points (kx[i], ky[i]); parallel over points with OpenMP.
// kx and ky must have the same length (checked).
Eigen::VectorXcd fourier_transform(const Phantom& p, const VecD& kx, const VecD& ky);

// The transform of the phantom times T plane waves, at many points:
//   out(t, j) = F(kx[j] - gx[t], ky[j] - gy[t])   (global phase included),
// i.e. FT[f(x) exp(i 2π g_t·x)](k_j): with a coil map written as a Fourier
// series S(x) = Σ_t a_t exp(i 2π g_t·x) (ops/coil_maps.h), FT[f S](k) =
// Σ_t a_t out(t, ·) exactly. Returns [T, M] (row t, column j). kx/ky and
// gx/gy must have matching lengths (checked). Parallel over points.
Eigen::MatrixXcd shifted_fourier_transforms(const Phantom& p, const VecD& kx, const VecD& ky, const VecD& gx,
                                            const VecD& gy);

// k-space on the Cartesian grid of an ny x nx raster of the square, scaled and
// phased so that it is the exact counterpart of the centred orthonormal DFT of
// that raster, numpy's
//   np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(raster), norm="ortho")).
// Element [u, v] (row u, column v) holds
//   F(kx, ky) * sqrt(ny nx) / 4 * exp(i 2 pi (cx m / nx + cy n / ny)),
//   m = v - floor(nx/2), n = u - floor(ny/2), kx = m/2, ky = -n/2
// (row index runs down while y runs up, hence the sign of ky), where
// cx = (2 floor(nx/2) + 1 - nx)/2 (1/2 for even nx, 0 for odd) and likewise cy
// account for pixel centres sitting half a pixel off the DFT origin. The
// inverse centred DFT of this array is the object band-limited to the grid,
// without any discretisation of the object (no "inverse crime").
// ny, nx >= 1 (checked). Parallel over rows with OpenMP.
ImageC kspace_on_grid(const Phantom& p, int ny, int nx);

// The spatial frequency (cycles per unit of the square) of DFT index m in an
// axis of n samples under the convention above: (m - floor(n/2)) / 2.
inline double grid_frequency(int index, int n) { return (index - n / 2) / 2.0; }

}  // namespace recofold
