// SPDX-License-Identifier: Apache-2.0
// Density compensation weights for non-Cartesian k-space: the analytic radial ramp and Pipe–Menon iteration.
//
// Units: a weight is the k-space area a sample stands for, in (cycles per
// field of view)², so that fully sampled Cartesian k-space has weight 1 per
// sample and gridding x = A^H W y (nufft.h) reproduces the image at the right
// scale: A^H W A ≈ I on the sampled band. Gridding with these weights is the
// non-Cartesian "zero-filled" baseline.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/core/types.h"
#include "recofold/ops/nufft.h"

namespace recofold {

// Ramp weights of full-diameter spokes: spoke s at angle θ_s (radians, the
// direction of increasing position) samples k = r_i (cos θ_s, sin θ_s) at
// positions r_i (cycles per FOV, the same for every spoke, increasing). Each
// sample stands for the area of its annulus sector:
//   w = |r_i| Δr_i Δθ_s,          Δr_i = (r_{i+1} - r_{i-1}) / 2 (one-sided at the ends),
//   w = Δr_i² Δθ_s / 4 at r = 0   (the centre disc of radius Δr/2, shared),
// where Δθ_s is half the angular gap between the spoke's neighbours, angles
// taken modulo π (a spoke at θ + π is the same line): π/S for S equally spaced
// spokes, and the exact local spacing for golden-angle orders. Output in
// point order s·R + i. Throws InputError(field "angles"/"positions") for
// empty or non-finite input or positions that do not increase.
std::vector<float> radial_ramp_dcf(const std::vector<double>& spoke_angles_rad, const std::vector<double>& positions);

struct PipeMenonOptions {
  int iterations = 25;       // 1..1000; the weights change by < 1e-3 after ~20 for radial and spiral
  double tolerance = 1e-4;   // stop when max_j |w_j' - w_j| / w_j is below this (>= 0)
  // Width of the density kernel in cells of a 2x oversampled grid (half as
  // many k-space cells), 4..16. The estimate's lattice sum is biased when the
  // kernel is narrow next to the sample spacing: on a fully sampled Cartesian
  // grid the weights come out 12% low at 4, 4% at 5, 0.3% at 7, 0.1% at 8
  // (measured); 7 is the default. Wider kernels blur the density more.
  int kernel_width = 7;

  std::vector<std::string> validate() const;  // "dcf.iterations = 0; must be 1..1000"
};

struct DcfResult {
  std::vector<float> weights;  // [M], (cycles per FOV)² per sample
  int iterations = 0;          // iterations run
  double last_change = 0.0;    // max relative change of the last iteration
};

// Iterative weights for any trajectory (Pipe & Menon, MRM 41, 1999):
//   w ← w / (C w),   (C w)_j = Σ_i w_i ψ(k_j - k_i),
// with ψ an exponential-of-semicircle kernel (2x grid, `kernel_width` cells)
// convolved with itself on the grid (NufftPlan::convolve_at_points), starting
// from w = 1. At the fixed point C w = 1; the weights are then scaled to
// sample areas by ∫ψ = (∫φ)⁴ / (σx σy) (grid cells converted to cycles per
// FOV). Where the trajectory leaves gaps wider than the kernel (the outer
// part of undersampled radial or spiral k-space) the weights cannot see the
// gaps and stay near those of the local sampling along the readout: prefer
// the analytic weights of the trajectory there (radial_ramp_dcf, the spiral
// weights of sampling/trajectory.h). Points are checked as by NufftPlan.
// `progress` may be null.
DcfResult pipe_menon_dcf(Index ny, Index nx, const VecD& kx, const VecD& ky, const PipeMenonOptions& options = {},
                         ProgressSink* progress = nullptr);

// Gridding of one coil's samples: x = A^H W y (the DCF-weighted adjoint).
void grid_with_dcf(const NufftPlan& plan, const std::vector<float>& dcf, const cfloat* values, cfloat* image);

}  // namespace recofold
