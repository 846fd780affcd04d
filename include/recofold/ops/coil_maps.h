// SPDX-License-Identifier: Apache-2.0
// Coil sensitivities: smooth synthetic maps of a receive array around the field of view, and their estimate from calibration data.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

// Synthetic receive array: `coils` small loops evenly spaced on a circle of
// radius `ring_radius` (units of the [-1,1] square) around the field of view,
// coil c at angle 2π c / C + `first_angle_rad`. Before normalisation coil c
// at point p = (x, y) has
//   magnitude  (1 + |p - q_c|² / falloff²)^(-1)        (q_c = coil centre)
//   phase      phase_c + 2π · phase_cycles · (t_c · p)   (t_c = unit tangent at q_c)
// with phase_c = 2π c / C, a smooth map whose phase varies by about
// phase_cycles cycles across the object. Maps are then normalised pointwise,
//   S_c(p) = raw_c(p) / sqrt(Σ_j |raw_j(p)|²),
// so Σ_c |S_c|² = 1 everywhere (in particular on the object support: the
// *common practice* normalisation of DEVELOPERS.md "Sources"). One coil gives S = 1.
struct CoilArrayOptions {
  int coils = 1;                 // 1 .. 32 (1: a single uniform coil, S = 1)
  double ring_radius = 1.5;      // > 1: coils sit outside the [-1,1] square
  double falloff = 1.0;          // > 0: distance at which the raw magnitude halves
  double phase_cycles = 0.25;    // >= 0: phase variation across the square, in cycles
  double first_angle_rad = 0.0;  // position of coil 0 (0 = right of the object)

  std::vector<std::string> validate() const;  // "coils = 0; must be 1..32", ...
};

// Normalised sensitivity of every coil at one point (x, y) of the square (size C).
std::vector<cfloat> coil_sensitivities_at(const CoilArrayOptions& options, double x, double y);

// Maps [C, ny, nx] at the pixel centres of an ny x nx raster of the square
// (phantom.h convention: x = -1 + (2 ix + 1)/nx, y = 1 - (2 iy + 1)/ny).
// Invalid options throw InputError(file "", field "coils"/...).
NdArray<cfloat> synthetic_coil_maps(const CoilArrayOptions& options, Index ny, Index nx);

// Coil maps as a short Fourier series, so that coil map x object has an exact
// transform (a sum of shifted closed-form transforms of the object):
//   S_c(x, y) = Σ_t a_{c,t} exp(i 2π (gx_t x + gy_t y)),   (x, y) in units of the [-1,1] square,
// with frequencies on the lattice g = (m, n) / kCoilSeriesPeriod, m, n in
// -order..order, i.e. (2 order + 1)² terms, and
//   FT[f S_c](k) = Σ_t a_{c,t} F(k - g_t)    (F the object's transform, phantom/fourier.h).
// The coefficients are the least-squares fit of the normalised loop model
// above (coil_sensitivities_at) at the pixel centres of a 48 x 48 raster of
// the square. The period (4 units, twice the square) keeps the series from
// having to be periodic across the square, so a low order follows the loop
// model closely (order 3: within about 1% of the largest value; the sum of
// squares stays within a few percent of 1 on the square). These are the maps
// the MRI simulation uses. One coil gives the single term a = 1, g = 0 (S = 1).
constexpr double kCoilSeriesPeriod = 4.0;

struct CoilFourierSeries {
  int coils = 1;
  int order = 0;
  std::vector<double> gx, gy;  // [T] frequencies, cycles per unit of the square
  std::vector<cdouble> coeff;  // [coils][T], row-major

  Index terms() const { return static_cast<Index>(gx.size()); }
  // S_c at one point of the square.
  cdouble value(int coil, double x, double y) const;
};

// The series fit for an array (options checked as in synthetic_coil_maps).
// order: 0..6 (InputError "coil_series_order" otherwise).
CoilFourierSeries fit_coil_fourier_series(const CoilArrayOptions& options, int order = 3);

// The series evaluated at the pixel centres of an ny x nx raster: [C, ny, nx].
NdArray<cfloat> coil_series_maps(const CoilFourierSeries& series, Index ny, Index nx);

// The largest centred rectangle of a mask [ny, nx] that is fully sampled
// (the calibration or "auto-calibration" region): rows [row0, row0+rows),
// columns [col0, col0+cols). Empty (rows = cols = 0) when the centre sample
// itself is missing.
struct CalibrationRegion {
  Index row0 = 0, col0 = 0, rows = 0, cols = 0;
};
CalibrationRegion find_calibration_region(const NdArray<uint8_t>& mask);

// Low-resolution estimate of the maps from the calibration region of
// multi-coil k-space [C, ny, nx]: each coil's calibration block is windowed
// (separable Hann taper over the block), zero-filled and inverse transformed;
// the maps are the coil images divided by their sum of squares,
//   S_c = I_c / sqrt(Σ_j |I_j|²),
// set to zero where the sum of squares is below `threshold` times its maximum
// (background, where the ratio is noise). Throws InputError(file, "/mri/mask",
// ...) when the calibration region is smaller than 4 x 4.
NdArray<cfloat> estimate_coil_maps(const NdArray<cfloat>& kspace, const NdArray<uint8_t>& mask,
                                   double threshold = 0.05, const std::string& file = "");

}  // namespace recofold
