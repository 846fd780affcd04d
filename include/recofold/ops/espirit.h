// SPDX-License-Identifier: Apache-2.0
// ESPIRiT coil sensitivity maps from a fully sampled calibration region
// (Uecker et al., "ESPIRiT - an eigenvalue approach to autocalibrating
// parallel MRI: where SENSE meets GRAPPA", MRM 71, 2014).
//
// Method (formulas written down from the paper's construction; the tests
// check the result against known maps, see tests/unit/ops_espirit_test.cc):
//  1. Calibration matrix A: one row per position of a k x k window inside the
//     calibration block of multi-coil k-space, holding the window's samples of
//     every coil (k² C columns, column (c, qy, qx) = c k² + qy k + qx).
//  2. SVD A = U Σ Vᴴ. The right singular vectors v_j with σ_j > t σ_1
//     ("kernels") span the signal subspace, as conj(v_j) since a window is a
//     row of A; the others, the kernel null space, annihilate every
//     calibration window.
//  3. The projection P = Σ_j conj(v_j) conj(v_j)ᴴ applied to every window and averaged
//     over the k² windows that contain a k-space point is a shift-invariant
//     multi-coil convolution W; data consistent with the calibration satisfy
//     W y = y. As a convolution, W acts in the image at each pixel r as a
//     C x C Hermitian matrix
//        G(r)_{c c'} = Σ_d g_{c c'}(d) exp(+i 2π d·(r - N/2)/N),
//        g_{c c'}(d) = (1/k²) Σ_{q - q' = d} P[(q, c), (q', c')],
//     with offsets d in [-(k-1), k-1]² (evaluated separably, exactly, at the
//     pixel grid of the centred FFT of ops/fft.h).
//  4. Per pixel, the eigenvector of G(r) with the largest eigenvalue λ(r) is
//     the vector of coil sensitivities (up to a phase); λ ≈ 1 where the data
//     support it. Where λ(r) < the crop threshold the maps are set to zero
//     (outside the object the model has no signal).
//  5. Phase: every pixel's vector is rotated so that its projection on one
//     fixed reference vector (the dominant direction of Σ_r m(r) m(r)ᴴ) is
//     real and positive, which makes the phase smooth across the image.
// The maps have unit norm per pixel, Σ_c |S_c(r)|² = 1 (0 where cropped): the
// convention of ops/coil_maps.h.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/ops/coil_maps.h"

namespace recofold {

struct EspiritOptions {
  // Window (kernel) size k in k-space samples per axis, 2 .. 16. The paper
  // uses 6 x 6 (from memory); larger kernels model less smooth maps but need
  // a larger calibration block.
  int kernel_size = 6;
  // The calibration block is the fully sampled centre of the mask, cropped
  // to at most this many samples per axis around the k-space centre (>=
  // kernel_size). 24 is common practice (from memory); more samples give
  // better maps from fully sampled data at a higher cost.
  int calibration_size = 24;
  // Keep singular vectors with σ_j > singular_threshold · σ_1, in (0, 1).
  // 0.02 is common practice (from memory): it separates signal from noise for
  // SNRs of real scans; lower values keep more noise in the subspace.
  double singular_threshold = 0.02;
  // Maps are zero where the largest eigenvalue of G(r) is below this, in
  // [0, 1). Eigenvalues close to 1 mark pixels the calibration data support;
  // 0.9 is common practice (from memory) and keeps the object with a margin.
  double crop_threshold = 0.9;

  // Every violation as "espirit.<field> = value; rule"; empty means valid.
  std::vector<std::string> validate() const;
};

struct EspiritResult {
  NdArray<cfloat> maps;        // [C, ny, nx], unit norm per pixel or 0 where cropped
  NdArray<float> eigenvalues;  // [ny, nx], the largest eigenvalue λ(r) of G(r)
  CalibrationRegion calibration;  // the block used (inside the mask's fully sampled centre)
  int kernels = 0;             // singular vectors kept
  int kernel_columns = 0;      // k² C
  // One line: "ESPIRiT 6x6 kernel, 24x24 calibration, 61 of 288 singular vectors (> 0.02 σ1), crop 0.9"
  std::string summary;
};

// Estimates ESPIRiT maps from multi-coil k-space [C, ny, nx] (zero where not
// sampled) and its mask [ny, nx]. `file` names the measurement in errors:
// InputError(file, "/mri/mask", ...) when the fully sampled centre is smaller
// than kernel_size + 1 in either direction; InputError(file, "espirit.<field>",
// ...) for invalid options. Rows of the image run in parallel (OpenMP).
EspiritResult espirit_maps(const NdArray<cfloat>& kspace, const NdArray<uint8_t>& mask, const EspiritOptions& options,
                           const std::string& file = "");

// Per-pixel subspace error of estimated maps against reference maps, both
// [C, ny, nx]: ||S - m mᴴ S|| / ||S|| at pixel r, with m the estimated vector
// normalised to unit length (1 where m = 0 and S ≠ 0, 0 where S = 0). It is
// the sine of the angle between the two vectors, so it ignores the per-pixel
// phase and scale that sensitivity estimates cannot determine.
ImageF map_subspace_error(const NdArray<cfloat>& estimated, const NdArray<cfloat>& reference);

}  // namespace recofold
