// SPDX-License-Identifier: Apache-2.0
// MRI acquisition on a non-Cartesian trajectory: exact (closed-form) or discrete (NUFFT of the raster)
// multi-coil k-space at the trajectory's points, with the same noise model as the Cartesian simulation.
#pragma once

#include <string>

#include "recofold/acquire/mri.h"
#include "recofold/core/measurement.h"
#include "recofold/core/trajectory.h"
#include "recofold/core/types.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/nufft.h"
#include "recofold/phantom/phantom.h"

namespace recofold {

// The simulated samples of one trajectory.
struct TrajectorySamples {
  NdArray<cfloat> kspace;     // [C, M], noisy
  NdArray<cfloat> coil_maps;  // [C, ny, nx]: the coil series evaluated at the pixel centres
  double noise_sigma = 0.0;   // per real and imaginary part (from snr_db when that is set)
  std::string kspace_source;  // one line: how the noiseless values were computed
};

// Samples of an object at the points of `t` (grid t.ny x t.nx, which must be
// the raster's shape: InputError field "trajectory" otherwise). Options as for
// simulate_mri (validated the same way: InvalidFields "mri.*"); `oversampling`
// is not used: there is no raster in the analytic route.
//   analytic (default): y_c(k) = the closed form of object x coil series c at
//     each point (acquire/exact_kspace.h), so the simulation commits no
//     inverse crime and has no rasterisation error, for any number of coils;
//     needs `analytic` (InputError field "truth" when null);
//   discrete: the SENSE-NUFFT of the raster with the same maps (NufftOptions
//     `nufft`), for comparison with the inverse crime.
// Noise: complex Gaussian of std σ per part on every sample, correlated
// between coils as in add_kspace_noise, stream Rng::for_stream(seed, "mri").
// SNR: σ from snr_db as in sigma_from_snr_db, over all M samples of all coils.
TrajectorySamples simulate_mri_trajectory(const Phantom* analytic, const ImageC& raster, const Trajectory& t,
                                          const MriSimulationOptions& options, const NufftOptions& nufft = {});

// The measurement record of simulate_mri_trajectory: MriData with the
// trajectory (its dcf must hold one weight per point: InputError
// "trajectory" otherwise), kspace [C, M], the synthetic coil maps, no mask,
// pattern = the trajectory kind, acceleration = ny nx / M, numbers/texts as in
// simulate_mri (snr_db, coil_correlation, seed, coil_ring_radius; kspace_source,
// truth; discrete: kspace_source names the NUFFT kernel); the truth is the raster.
Measurement simulate_mri_trajectory_measurement(const Phantom* analytic, const ImageC& raster, double pixel_spacing_mm,
                                                const Trajectory& t, const MriSimulationOptions& options,
                                                const NufftOptions& nufft = {});

}  // namespace recofold
