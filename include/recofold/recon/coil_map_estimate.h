// SPDX-License-Identifier: Apache-2.0
// Coil maps a reconstruction uses instead of the measurement's own: the spec's
// `maps` (recon_spec.h) for every MRI method.
//   measured  the file's /mri/coil_maps (synthetic truth, or what `import` estimated)
//   estimated the low-resolution estimate of ops/coil_maps.h from the fully sampled
//             centre (Cartesian only)
//   espirit   ESPIRiT (ops/espirit.h, default options) from the calibration data:
//             Cartesian: the mask's fully sampled centre;
//             non-Cartesian: per coil, the coil image by unregularised CG-NUFFT
//             (30 steps), transformed to Cartesian k-space; its central block of
//             EspiritOptions::calibration_size samples per axis, which the dense
//             centre of radial and spiral trajectories determines well, is the
//             calibration block (gridding alone aliases there).
// Maps follow the convention of ops/coil_maps.h: unit norm per pixel, 0 where cropped.
#pragma once

#include <string>

#include "recofold/core/measurement.h"
#include "recofold/ops/espirit.h"
#include "recofold/recon/recon_spec.h"

namespace recofold {

// Replaces m.mri->coil_maps (and coil_maps_source: "estimated" or "espirit")
// as `source` says; kMeasured leaves `m` unchanged. Returns a one-line summary
// of what was estimated ("" for kMeasured). `file` names the measurement in
// errors: InputError(file, "maps", ...) for estimated maps of a non-Cartesian
// measurement, InputError(file, "/mri/mask", ...) when the calibration region
// is too small, InputError(file, "/mri", ...) when `m` has no MRI data.
std::string replace_coil_maps(Measurement& m, CoilMapSource source, const std::string& file = "",
                              const EspiritOptions& options = {});

}  // namespace recofold
