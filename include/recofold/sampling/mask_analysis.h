// SPDX-License-Identifier: Apache-2.0
// Mask analysis: acceleration, calibration region, point-spread function and its side-lobes in image and wavelet domain.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/wavelet.h"

namespace recofold {

struct MaskAnalysisOptions {
  // Half-width of the main lobe excluded from the side-lobe search: the
  // (2w+1) x (2w+1) block around the PSF peak (w = 1: the peak and its 8
  // neighbours, which a fully sampled centre broadens).
  int main_lobe_halfwidth = 1;
  // Transform point-spread function (Lustig, Donoho & Pauly, MRM 2007): wavelet
  // family and number of levels (reduced to what the grid allows: each side
  // divisible by 2^levels; none for odd sizes).
  WaveletFamily wavelet = WaveletFamily::kDb4;
  int wavelet_levels = 3;
  // Lower end of the log-magnitude PSF picture, in dB below the peak (< 0).
  double picture_floor_db = -60.0;
};

struct TpsfLevel {
  int level = 0;                 // 1 = finest
  double sidelobe_ratio = 0.0;   // worst over the three detail orientations
};

// Results; the PSF is the inverse centred orthonormal DFT of the mask,
// psf = F^H m (peak at pixel (ny/2, nx/2), value samples / sqrt(ny nx)).
struct MaskAnalysis {
  Index ny = 0, nx = 0;
  Index samples = 0;
  double acceleration = 0.0;          // ny nx / samples
  CalibrationRegion calibration;      // largest fully sampled centred block
  double psf_peak = 0.0;              // |psf| at the centre
  double psf_sidelobe_ratio = 0.0;    // max |psf| outside the main lobe / peak (0 = no aliasing)
  Index psf_sidelobe_dy = 0, psf_sidelobe_dx = 0;  // offset of that side-lobe from the peak (pixels)
  // TPSF: for a unit coefficient i at the centre of each detail band,
  // |W F^H M F W^H e_i|; ratio = max over j != i / value at i. Worst over levels;
  // negative when the grid does not allow a wavelet transform.
  double tpsf_sidelobe_ratio = -1.0;
  std::vector<TpsfLevel> tpsf_levels;
  std::string wavelet;                // e.g. "db4, 3 levels"
  ImageF psf_magnitude;               // |psf| / peak, [ny, nx]

  // One JSON object (keys: ny, nx, samples, acceleration, calibration{rows,cols,row0,col0},
  // psf_peak, psf_sidelobe_ratio, psf_sidelobe_db, psf_sidelobe_offset[dy,dx],
  // tpsf_sidelobe_ratio, tpsf_levels[...], wavelet).
  std::string to_json() const;
};

// Analyses a 0/1 mask [ny, nx] (checked: rank 2, non-empty, at least one sample).
MaskAnalysis analyse_mask(const NdArray<uint8_t>& mask, const MaskAnalysisOptions& options = {});

// The picture of a mask: the mask (black 0 / white 1) and its log-magnitude
// PSF side by side, separated by a 4-pixel grey bar; values in [0, 1]
// (PSF: 20 log10(|psf|/peak) mapped from `floor_db` to 0 dB).
ImageF mask_picture(const NdArray<uint8_t>& mask, const MaskAnalysis& analysis, double floor_db = -60.0);

}  // namespace recofold
