// SPDX-License-Identifier: Apache-2.0
// Filtered back-projection for parallel beams and weighted FBP for fan beams, with the classical windows.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/ops/ct_geometry.h"

namespace recofold {

struct Measurement;

// Windows applied to the band-limited ramp, named and defined as in
// scikit-image's iradon(filter_name=...) (0.19, from memory; checked against
// skimage in tests/reference/ops_radon_skimage.py). With the padded length
// P and DFT index k (frequency f_k = k/P for k < P/2, (k - P)/P otherwise):
//   ram-lak      1 (the plain band-limited ramp)
//   shepp-logan  sin(pi f_k) / (pi f_k)
//   cosine       sin(pi ((k + P/2) mod P) / P)           = cos(pi f_k)
//   hamming      0.54 - 0.46 cos(2 pi ((k + P/2) mod P) / (P - 1))
//   hann         0.5  - 0.5  cos(2 pi ((k + P/2) mod P) / (P - 1))
enum class FbpFilter { kRamLak, kSheppLogan, kCosine, kHamming, kHann };

std::string_view to_string(FbpFilter filter);
std::optional<FbpFilter> parse_fbp_filter(std::string_view text);
// Parses the names of to_string and "ramp" (= ram-lak). fbp_filter_names():
// "ram-lak (or ramp), shepp-logan, cosine, hamming, hann" (for error messages and --help).
std::string fbp_filter_names();

struct FbpOptions {
  FbpFilter filter = FbpFilter::kRamLak;
  // Zero-pad each projection to the next power of two >= padding_factor x
  // detectors (and >= 64) before filtering; >= 2 avoids wrap-around of the
  // ramp's slowly decaying tails (Kak & Slaney, 1988, sec. 3.3).
  int padding_factor = 2;
  // Set pixels outside the circle that every view's detector covers
  // (CtGeometry::covered_radius_mm) to zero, like iradon(circle=True); they
  // lack data from some views.
  bool zero_outside_circle = true;
  // Attenuation per unit image intensity (1/mm): the output is divided by it,
  // so a sinogram of mu x line integrals reconstructs in intensity units.
  double attenuation_per_mm = 1.0;

  std::vector<std::string> validate() const;  // every violation; empty means valid
};

// Real DFT-ordered frequency response of length P (a power of two) used to
// filter projections sampled at unit spacing: 2 Re(DFT(h)) x window, where h
// is the band-limited spatial ramp of Kak & Slaney (eq. 3.61, tau = 1):
// h(0) = 1/4, h(n) = 0 for even n != 0, h(n) = -1/(pi n)^2 for odd n (indices
// circular). The factor 2 is scikit-image's and is undone by the pi/(2 N)
// back-projection weight below.
std::vector<double> fbp_frequency_response(FbpFilter filter, Index padded_length);

// Filtered back-projection onto the geometry's grid, output [ny, nx] in image
// intensity units (sinogram / attenuation_per_mm).
//
// Parallel beam (Kak & Slaney eq. 3.61-3.62): each projection is convolved
// with the windowed ramp (divided by the detector spacing tau), then
//   f(x, y) = pi / (2 N) sum_views q_theta(x cos theta + y sin theta)
// with linear interpolation between detectors (pixel-driven). The pi / N
// weight assumes N views spread over [0, pi) (full, sparse or golden-angle
// sets); a limited arc reconstructs with the same weight (missing wedge left
// empty).
//
// Fan beam: weighted FBP over a full turn (Kak & Slaney sec. 3.4, from
// memory), no rebinning. Equiangular: projections weighted by R cos gamma,
// convolved with 1/2 (gamma / sin gamma)^2 h(gamma) (angular spacing alpha =
// spacing / D), back-projected with weight 1/L^2 (L = source-to-pixel
// distance). Flat: detector scaled to the isocentre (s = u R / D), weighted
// by R / sqrt(R^2 + s^2), convolved with h / 2, back-projected with weight
// 1/U^2, U = (R + p.d) / R. Both sum with delta beta = 2 pi / N, so views
// must cover 360 degrees evenly for a quantitative image.
//
// OpenMP: filtering in parallel over views, back-projection over image rows.
// Throws InputError for invalid options or geometry.
ImageF fbp(const CtGeometry& geometry, const float* sinogram, const FbpOptions& options);

// FBP of a CT measurement; attenuation_per_mm is taken from the record
// (options.attenuation_per_mm is ignored). Throws InputError naming `file`.
ImageF fbp(const Measurement& m, FbpOptions options, const std::string& file = "");

}  // namespace recofold
