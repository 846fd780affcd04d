// SPDX-License-Identifier: Apache-2.0
// CT acquisition: sinogram of a phantom (exact line integrals or projected raster), attenuation scale and noise.
#pragma once

#include <cstdint>

#include "recofold/acquire/ct_noise.h"
#include "recofold/core/measurement.h"
#include "recofold/core/types.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/phantom/phantom.h"

namespace recofold {

// Largest line integral the automatic attenuation scale aims at: about 200 mm
// of water at 0.02 / mm (0.2 cm^-1 near 60-70 keV, from memory; REFERENCES.md),
// i.e. the largest line integrals of an adult head, usually quoted as 3-5.
constexpr double kAutoLargestLineIntegral = 4.0;

struct CtSimulationOptions {
  CtGeometry geometry;  // acquisition and image grid; must be valid
  // Attenuation per unit phantom intensity (1/mm). <= 0 selects it
  // automatically as kAutoLargestLineIntegral / (largest noiseless line
  // integral in intensity x mm), so any phantom's most attenuating ray gets
  // p = 4. At 256 mm this gives (measured): qc-disk 0.022/mm (its water-like
  // background 1.0 lands near water's 0.02/mm); Shepp-Logan 1974 0.016/mm
  // (brain ~1.0); modified Shepp-Logan 0.056/mm (brain 0.2 -> 0.011/mm,
  // skull 1.0 -> 0.056/mm). Give --mu for a fixed physical mapping instead.
  double mu_per_mm = 0.0;
  // true: exact line integrals of the analytic phantom (no inverse crime);
  // false: the Joseph projector applied to the raster ("discrete" truth).
  bool analytic = true;
  bool noisy = false;              // add transmission noise (below)
  TransmissionNoiseOptions noise;  // used when noisy
  uint64_t seed = 0;               // noise streams (Rng::for_stream(seed, view))
};

// Simulates a CT acquisition. `phantom` is required when options.analytic
// (its fov_mm must equal nx * pixel_size_mm within 0.1%); `raster` [ny, nx]
// (real image on the geometry's grid) is used when !options.analytic.
// Returns the CtData record: sinogram of line integrals (dimensionless, after
// noise and log transform when noisy), geometry, mu_per_mm, photons_per_ray,
// electronic_sigma, and numbers "largest_line_integral" (noiseless),
// "mu_automatic" (1/0), "bowtie_edge_fraction" (bowtie only); texts
// "sinogram_source" ("analytic" | "discrete") and "noise_model".
// Throws InputError (field names the option) for invalid input.
CtData simulate_ct(const CtSimulationOptions& options, const Phantom* phantom, const ImageF& raster);

}  // namespace recofold
