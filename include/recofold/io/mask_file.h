// SPDX-License-Identifier: Apache-2.0
// Sampling mask files: the HDF5 layout `recofold mask` writes, and reading a mask from any file that holds one.
//
// Mask file (.h5), written atomically (temporary file, then rename):
//   /                    attrs research_use_only = 1, producer
//   /mask                uint8 [ny, nx], 1 = sampled (centred k-space, DC at [ny/2, nx/2]);
//                        attrs pattern (string), requested_acceleration (float64; 0: not
//                        requested), achieved_acceleration (float64, ny nx / samples),
//                        samples, seed, center_rows, center_cols (int64), research_use_only = 1,
//                        and the pattern's own numbers (float64, e.g. poisson_radius_px)
//   /spoke_angles_rad    float64 [spokes] (radial patterns only, in acquisition order)
//   /provenance          attrs producer, command, created_utc and the extra entries
#pragma once

#include <string>

#include "recofold/core/provenance.h"
#include "recofold/sampling/mask.h"

namespace recofold {

// Writes `mask` in the layout above. WorkError when the file cannot be written.
void write_mask_file(const std::string& path, const SamplingMask& mask, const Provenance& prov);

// Reads a mask from
//   .h5 — dataset /mask (a mask file, with its attributes and spoke angles),
//         else /mri/mask (a measurement file), else /image (an image file,
//         nonzero = sampled);
//   .png and the other image formats — nonzero pixels are sampled.
// InputError(path, field, ...) when the file is missing or of another kind,
// nothing usable is found, the data is complex, not 2-D, not finite or
// samples no point; `field` is what the caller calls the file (the CLI
// passes its flag).
SamplingMask read_mask_file(const std::string& path, const std::string& field);

}  // namespace recofold
