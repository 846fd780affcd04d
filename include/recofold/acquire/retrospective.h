// SPDX-License-Identifier: Apache-2.0
// Retrospective undersampling: a mask applied to fully sampled (for example
// imported) multi-coil k-space, with the fully sampled coil-combined image as the truth.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "recofold/core/measurement.h"
#include "recofold/sampling/mask.h"

namespace recofold {

struct RetrospectiveOptions {
  // Extra complex Gaussian noise, std per real and imaginary part, added to
  // the kept samples (>= 0; 0 = the data's own noise only). The result's
  // noise level is sqrt(σ_source² + added_noise_sigma²).
  double added_noise_sigma = 0.0;
  uint64_t seed = 0;  // of the added noise

  // Every violation as "field = value; rule"; empty means valid.
  std::vector<std::string> validate() const;
};

// From a fully sampled MRI measurement `full` (every point of /mri/mask
// sampled, coil maps present) and a mask of its grid:
//   kspace = full kspace ⊙ mask (+ noise on the kept samples),
//   truth  = Σ_c conj(S_c) F⁻¹(y_c) / Σ_c |S_c|² of the fully sampled data
//            (the sensitivity-weighted coil combination; 0 where the maps are
//            0), complex, kind "fully sampled". It carries the source's own
//            noise: scores against it measure agreement with the fully
//            sampled image, not with a noiseless object.
// Coil maps, grid and spacing are the source's; pattern, R and spoke angles
// the mask's; numbers source_noise_sigma and added_noise_sigma and text
// truth (the sentence above) are added. `file` names the source in errors:
// InputError(file, "/mri/mask", ...) when the source is not fully sampled or
// the mask's shape differs from the grid; InputError(file, "/mri", ...) for a
// non-MRI measurement; InputError(file, "/mri/coil_maps", ...) without maps.
Measurement undersample_retrospectively(const Measurement& full, const SamplingMask& mask,
                                        const RetrospectiveOptions& options, const std::string& file = "");

}  // namespace recofold
