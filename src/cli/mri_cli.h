// SPDX-License-Identifier: Apache-2.0
// MRI parts of the CLI shared by `mask`, `simulate` and `recon`: the mask file and mask report.
#pragma once

#include <string>

#include "recofold/core/provenance.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/mask_analysis.h"

namespace recofold::cli {

// The mask file written by `recofold mask --out FILE.h5`:
//   /                    attrs research_use_only = 1, producer
//   /mask                uint8 [ny, nx], 1 = sampled (centred k-space, DC at [ny/2, nx/2]);
//                        attrs pattern, requested_acceleration (0: not requested),
//                        achieved_acceleration, samples, seed, center_rows, center_cols,
//                        and the pattern's numbers (e.g. poisson_radius_px)
//   /spoke_angles_rad    float64 [spokes] (radial patterns only, acquisition order)
//   /provenance          attrs producer, command, created_utc, extra entries
void write_mask_file(const std::string& path, const SamplingMask& mask, const Provenance& prov);

// Reads a mask for `--mask FILE` (`flag` names the flag in errors):
//   .h5 — dataset /mask (a mask file), else /mri/mask (a measurement file),
//         else /image (an image file, nonzero = sampled);
//   .png and the other image formats — nonzero pixels are sampled.
// InputError naming the file when nothing usable is found, the data is not
// 2-D, not finite or samples no point.
SamplingMask read_mask_any(const std::string& path, const std::string& flag);

// The JSON report of `mask --report`: the analysis plus pattern facts.
std::string mask_report_json(const SamplingMask& mask, const MaskAnalysis& analysis);

// One-line summary: "lines-vd 256x256: R 4.000 (requested 4), 16384 samples, centre 20x256, PSF side-lobe -17.3 dB".
std::string mask_summary(const SamplingMask& mask, const MaskAnalysis& analysis);

}  // namespace recofold::cli
