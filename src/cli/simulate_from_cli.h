// SPDX-License-Identifier: Apache-2.0
// `recofold simulate --from MEAS.h5 --mask M`: retrospective undersampling of a
// fully sampled measurement (for example one written by `recofold import`).
#pragma once

#include <cstdint>
#include <string>

#include "cli_common.h"
#include "recofold/core/provenance.h"
#include "recofold/sampling/mask.h"

namespace recofold::cli {

struct SimulateFromFlags {
  std::string from, mask, out;
  double noise = 0.0;  // added noise std per real and imaginary part
  uint64_t seed = 0;
};

// Flags of `simulate` that describe a simulated acquisition (object, coils,
// noise model, CT geometry) and therefore do not apply with --from; run_simulate_from
// refuses any of them that was given.
// The mask: .h5 (mask, measurement or image file), an image such as .png, or
// a sampling spec .toml (kind = "mri-mask"), drawn on the grid of the data
// (a spec's own size, when it differs, is replaced by the data's and the
// summary says so). Writes the measurement with truth kind "fully sampled".
// The mask of --mask FILE on the grid [ny, nx]: a mask file (its shape must
// match) or a sampling spec .toml drawn on that grid; `note` says when a
// spec's size was replaced; provenance records the file or spec.
SamplingMask mask_for_grid(const std::string& path, Index ny, Index nx, Provenance& prov, std::string& note);

void run_simulate_from(const SimulateFromFlags& flags, const CLI::App& sub, const Context& ctx);

}  // namespace recofold::cli
