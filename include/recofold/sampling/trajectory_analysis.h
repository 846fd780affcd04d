// SPDX-License-Identifier: Apache-2.0
// Trajectory analysis: point-spread function through the density-compensated adjoint, side-lobes, sampling density.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/sampling/trajectory.h"

namespace recofold {

struct TrajectoryAnalysisOptions {
  double nufft_epsilon = 1e-4;     // accuracy of the NUFFT used for the PSF
  double picture_floor_db = -60.0; // lower end of the log-magnitude PSF picture (< 0)
  int density_bins = 32;           // radial bins of the density profile, 4..1024
};

// Results. The PSF is the gridding reconstruction of a unit point at the
// centre pixel, whose k-space is a constant (the DCF-weighted adjoint of ones):
//   psf = A^H W A δ = A^H W 1 / sqrt(ny nx)   (ops/nufft.h A, W the trajectory's weights),
// on the ny x nx grid; its peak at pixel (ny/2, nx/2) is Σ w / (ny nx), the
// k-space area the weights cover over the grid's (1 for full Cartesian coverage).
struct TrajectoryAnalysis {
  Index ny = 0, nx = 0;
  Index points = 0, readouts = 0, samples_per_readout = 0;
  // Samples relative to a fully sampled Cartesian grid: ny nx / M (the
  // acceleration a Cartesian protocol with the same sample count would have).
  double cartesian_acceleration = 0.0;
  double kmax_reached = 0.0;        // max |k| over the points, cycles per FOV
  double dcf_area = 0.0;            // Σ w, (cycles per FOV)²: the k-space area the weights cover
  double psf_peak = 0.0;            // |psf| at the centre pixel
  // Main lobe: the disc up to the first minimum of the azimuthally averaged |psf|.
  double main_lobe_radius_px = 0.0;
  double psf_fwhm_px = 0.0;         // full width at half maximum of that profile
  double psf_sidelobe_ratio = 0.0;  // max |psf| outside the main lobe / peak
  Index psf_sidelobe_dy = 0, psf_sidelobe_dx = 0;  // its offset from the centre, pixels
  // Sampling density profile: samples per (cycle per FOV)² in annuli of
  // equal width from 0 to kmax_reached (1 = Cartesian Nyquist density).
  std::vector<double> density_radius;  // bin centres, cycles per FOV
  std::vector<double> density;         // samples / area
  ImageF psf_magnitude;                // |psf| / peak, [ny, nx]
  ImageF density_map;                  // samples per Cartesian k-space cell, [ny, nx] (row u: ky = ny/2 - u)

  // One JSON object: ny, nx, points, readouts, samples_per_readout,
  // cartesian_acceleration, kmax_reached, dcf_area, psf_peak,
  // main_lobe_radius_px, psf_fwhm_px, psf_sidelobe_ratio, psf_sidelobe_db,
  // psf_sidelobe_offset [dy, dx], density_profile {radius [...], samples_per_cell [...]}.
  std::string to_json() const;
};

TrajectoryAnalysis analyse_trajectory(const Trajectory& t, const TrajectoryAnalysisOptions& options = {});

// The picture of a trajectory: the sampling density map (log10 of samples
// per Cartesian cell mapped from -1 to 2, i.e. 0.1 to 100 samples per cell;
// black = no sample) and the log-magnitude PSF (0 dB to `floor_db`) side by
// side, separated by a 4-pixel grey bar; values in [0, 1].
ImageF trajectory_picture(const TrajectoryAnalysis& analysis, double floor_db = -60.0);

}  // namespace recofold
