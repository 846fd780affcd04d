// SPDX-License-Identifier: Apache-2.0
// Private to src/ops: cached FFTW plans, aligned per-thread scratch and the
// index maps of the centring shifts, shared by the FFT and the multi-coil operators.
#pragma once

#include <cstddef>

#include "recofold/core/types.h"
#include "recofold/ops/fft.h"

namespace recofold::internal {

// A per-thread buffer of at least `n` complex values, aligned for FFTW's SIMD
// code (fftwf_malloc). `slot` selects one of a few independent buffers, so a
// caller can hold two at once. Valid until the same thread asks the same slot
// for a larger size.
cfloat* fft_scratch(size_t n, int slot);

// In-place unnormalised 2-D DFT (FFTW sign convention: forward e^{-i...}) of a
// buffer obtained from fft_scratch(), using a cached plan made with `threads`
// FFTW threads. Thread-safe: planning is serialised, execution is not.
void fft_execute_inplace(cfloat* buffer, Index ny, Index nx, FftDirection direction, int threads);
// Same with FFTW_ESTIMATE plans whatever set_fft_measure says (reproducible bytes).
void fft_execute_inplace_estimated(cfloat* buffer, Index ny, Index nx, FftDirection direction, int threads);

// Calls f(dst, src) for every element of a row-major [ny, nx] array, where
// src is dst moved by (sy, sx) with wrap-around:
//   src = ((iy + sy) mod ny) * nx + (ix + sx) mod nx,  dst = iy * nx + ix.
// With (ny/2, nx/2) this gathers ifftshift(in); with ((ny+1)/2, (nx+1)/2) it
// gathers fftshift(in). Row segments avoid a modulo in the inner loop.
template <typename F>
inline void for_each_shifted(Index ny, Index nx, Index sy, Index sx, F&& f) {
  const Index split = nx - sx;  // columns [0, split) read src columns [sx, nx)
  for (Index iy = 0; iy < ny; ++iy) {
    Index ry = iy + sy;
    if (ry >= ny) ry -= ny;
    const Index drow = iy * nx, srow = ry * nx;
    for (Index ix = 0; ix < split; ++ix) f(drow + ix, srow + ix + sx);
    for (Index ix = split; ix < nx; ++ix) f(drow + ix, srow + ix - split);
  }
}

// Complex products written out in real arithmetic: std::complex's operator*
// must handle inf/NaN corner cases (C99 Annex G) and compiles to a library
// call per element, which made the coil passes cost more than the FFTs.
inline cfloat mul(cfloat a, cfloat b) {
  return cfloat(a.real() * b.real() - a.imag() * b.imag(), a.real() * b.imag() + a.imag() * b.real());
}
// conj(a) * b
inline cfloat mul_conj(cfloat a, cfloat b) {
  return cfloat(a.real() * b.real() + a.imag() * b.imag(), a.real() * b.imag() - a.imag() * b.real());
}

// Shift that gathers ifftshift (centred -> FFT order) and fftshift (FFT order -> centred).
inline Index to_fft_order_shift(Index n) { return n / 2; }
inline Index to_centred_shift(Index n) { return (n + 1) / 2; }

}  // namespace recofold::internal
