// SPDX-License-Identifier: Apache-2.0
// MRI acquisition simulation: exact or discrete multi-coil k-space of a phantom, complex Gaussian noise, measurement record.
#pragma once

#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "recofold/core/field_error.h"
#include "recofold/core/measurement.h"
#include "recofold/core/rng.h"
#include "recofold/core/types.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/phantom/phantom.h"
#include "recofold/sampling/mask.h"

namespace recofold {

// How the noiseless k-space is computed.
enum class MriTruth {
  // "analytic": from the phantom's closed form, no inverse crime. One coil:
  // the exact transform at the grid frequencies (phantom/fourier.h
  // kspace_on_grid). Several coils: object × coil map rasterised on a grid
  // `oversampling` times finer, transformed, cropped to the centre and
  // corrected for the fine pixels' box average (divided by
  // sinc(π kx dxf) sinc(π ky dyf)) and for the half-pixel offset between the grids.
  kAnalytic,
  // "discrete": E applied to the raster on the reconstruction grid (the
  // "inverse crime", for comparison).
  kDiscrete,
};

struct MriSimulationOptions {
  CoilArrayOptions coil_array;  // coils = 1 .. 32 and the array geometry (ops/coil_maps.h)
  MriTruth truth = MriTruth::kAnalytic;
  int oversampling = 2;         // multi-coil analytic raster factor, 2 .. 8
  // Noise: complex Gaussian, std `noise_sigma` for the real part and for the
  // imaginary part of every sampled k-space value (unsampled points stay 0).
  // Under the orthonormal FFT the image-domain noise has the same std
  // (Parseval). Either absolute (noise_sigma >= 0), or from `snr_db` when it
  // is finite:
  //   SNR_dB = 10 log10( Σ_sampled |y_clean|² / (n_sampled_values · 2σ²) ),
  // the mean clean sample energy over the mean noise energy.
  double noise_sigma = 0.0;
  double snr_db = std::numeric_limits<double>::quiet_NaN();
  // Noise correlation between coils on the ring: corr(i, j) = ρ^d(i, j), d
  // the distance around the ring (neighbours ρ, next ρ², ...); ρ in [0, 1).
  // Each coil keeps std σ. Generated as L z with Ψ = L Lᴴ (Cholesky).
  double coil_correlation = 0.0;
  uint64_t seed = 0;

  // Every violation by field path: "mri.coils", "mri.ring_radius", ...
  // (coil_array), "mri.oversampling", "mri.noise_sigma", "mri.snr_db",
  // "mri.coil_correlation".
  std::vector<FieldError> validate() const;
};

std::string_view to_string(MriTruth t);

// Simulates an MRI measurement.
//   analytic: the phantom's component description, or null for a raster-only
//             object (then only MriTruth::kDiscrete is possible: InputError
//             field "truth" otherwise);
//   raster:   the object on the reconstruction grid [ny, nx] (also stored as truth);
//   mask:     the sampling pattern, [ny, nx] (InputError field "mask" otherwise).
// Invalid options throw InvalidFields (fields of MriSimulationOptions::validate).
// Fills modality, grid, /mri (k-space, mask, synthetic coil maps, σ, pattern,
// R, spoke angles, numbers snr_db / coil_correlation / seed, text
// kspace_source) and the truth; the caller fills the provenance.
Measurement simulate_mri(const Phantom* analytic, const ImageC& raster, double pixel_spacing_mm,
                         const SamplingMask& mask, const MriSimulationOptions& options);

// The ground truth of a simulated MRI measurement (Cartesian or on a trajectory): the raster
// [ny, nx]; complex when the analytic object is (or, raster-only, when any pixel has an
// imaginary part); truth_kind = to_string(truth).
void set_simulated_truth(Measurement& m, const Phantom* analytic, const ImageC& raster, MriTruth truth);

// Noiseless k-space [C, ny, nx] of the phantom with the given coil maps
// options, on the full grid, by the multi-coil analytic route above.
NdArray<cfloat> oversampled_raster_kspace(const Phantom& p, const CoilArrayOptions& coils, Index ny, Index nx,
                                          int oversampling);

// σ for a target SNR (definition above) of clean k-space [C, ny, nx] on a mask.
double sigma_from_snr_db(const NdArray<cfloat>& clean, const NdArray<uint8_t>& mask, double snr_db);

// Adds complex Gaussian noise of std σ (per part) to the sampled points of
// every coil, correlated between coils as described above. InvalidFields
// "mri.coil_correlation" if the correlation matrix is not positive definite.
void add_kspace_noise(NdArray<cfloat>& kspace, const NdArray<uint8_t>& mask, double sigma, double coil_correlation,
                      Rng& rng);

}  // namespace recofold
