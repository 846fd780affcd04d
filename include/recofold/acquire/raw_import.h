// SPDX-License-Identifier: Apache-2.0
// From raw Cartesian k-space (core/raw_kspace.h, read by io/ismrmrd_file.h) to an MRI
// measurement: noise pre-whitening, readout-oversampling removal, mask, noise level.
#pragma once

#include <string>

#include "recofold/core/measurement.h"
#include "recofold/core/raw_kspace.h"
#include "recofold/core/types.h"

namespace recofold {

struct RawImportOptions {
  // Pre-whiten with the noise covariance of the noise-adjust scans when the
  // raw data have them (see measurement_from_raw). false keeps the channels as
  // stored (for comparisons with reconstructions that do not whiten).
  bool prewhiten = true;
};

// Assembles the measurement of one slice:
//  1. Noise pre-whitening (when `raw.noise_covariance` is present and
//     `options.prewhiten`): the covariance of the noise scans is rescaled to
//     the imaging dwell time, Σ = Σ_noise · t_noise / t_imaging (noise power
//     grows with the sampling bandwidth 1/t; skipped when a dwell time is not
//     stated), factored Σ = L Lᴴ (Cholesky), and every k-space point of the
//     channels becomes y ← s L⁻¹ y with s = sqrt(trace Σ / C): the channels
//     are uncorrelated with equal noise afterwards and the data keep their
//     scale. The noise level is then σ = s / √2 per real and imaginary part.
//  2. Readout oversampling removal (raw.readout_keep < ex): each sampled row
//     is transformed to the image along x (centred orthonormal DFT), the
//     central readout_keep pixels are kept (the reconstruction field of view)
//     and the row is transformed back; white noise keeps its per-sample level
//     under these orthonormal transforms. A column of the new grid counts as
//     sampled when the nearest column of the encoded grid was; others are set
//     to zero (partial echoes).
//  3. Noise level without noise scans: the file's own statement
//     (raw.header_noise_sigma), otherwise an estimate from the data:
//     σ = median(|w|) / 0.6745 over the real and imaginary parts w of the
//     finest diagonal Haar wavelet coefficients of every coil's zero-filled
//     image (Donoho & Johnstone, Biometrika 81, 1994; the 0.6745 is the
//     median of |N(0,1)|), divided by sqrt(sampled fraction) because a
//     zero-filled image carries only that share of the k-space noise power.
// The result has modality mri, grid [ey, readout_keep], pixel spacing
// (encoded FOV y / ey, encoded FOV x / ex), k-space, mask, σ, pattern "full"
// (every point sampled) or "acquired", the acceleration, numbers
// (readout_oversampling, noise_samples, averages, lines) and texts
// (kspace_source, noise_sigma_source, prewhitening); coil maps are left empty
// for the caller (ops/espirit.h or estimate_coil_maps) and the provenance
// gets the raw header's texts as "raw.<name>". `file` names the raw file in
// errors: InputError when the noise covariance cannot be factored (fewer
// noise samples than channels, or a channel without noise).
Measurement measurement_from_raw(const RawCartesian& raw, const RawImportOptions& options, const std::string& file = "");

// The noise estimate of step 3 for multi-coil k-space [C, ny, nx] on a mask.
double estimate_kspace_noise_sigma(const NdArray<cfloat>& kspace, const NdArray<uint8_t>& mask);

}  // namespace recofold
