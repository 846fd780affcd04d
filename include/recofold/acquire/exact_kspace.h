// SPDX-License-Identifier: Apache-2.0
// Exact noiseless k-space of an analytic phantom at arbitrary points, for one coil or a coil array written as a
// Fourier series, scaled to the NUFFT's (and the centred orthonormal DFT's) convention.
#pragma once

#include "recofold/core/types.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/phantom/phantom.h"

namespace recofold {

// Values y[c, j] for points k_j = (kx[j], ky[j]) in cycles per FOV (x right,
// y up; ops/nufft.h) of an ny x nx image:
//   y_c(k) = sqrt(ny nx)/4 · exp(i 2π (cx kx/nx - cy ky/ny)) · Σ_t a_{c,t} F(k/2 - g_t),
// where F is the phantom's closed-form transform (phantom/fourier.h; k/2 is
// k in cycles per unit of the [-1,1] square), a_{c,t}, g_t the coil series
// (ops/coil_maps.h; null = one coil with S = 1), and cx = 1/2 for even nx, 0
// for odd (likewise cy), the offset of pixel centres from the DFT origin.
// This is the exact counterpart of the NUFFT of the raster (A x with x the
// object band-limited to the pixel grid): at integer points and one coil it
// equals phantom/fourier.h kspace_on_grid. No raster, no inverse crime.
// Points are not range-checked here (the NUFFT plan of the measurement is).
// Returns [C, M].
NdArray<cfloat> exact_kspace_at_points(const Phantom& p, Index ny, Index nx, const VecD& kx, const VecD& ky,
                                       const CoilFourierSeries* coils = nullptr);

}  // namespace recofold
