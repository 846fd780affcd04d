// SPDX-License-Identifier: Apache-2.0
// MRI parts of the CLI shared by `mask`, `simulate` and `recon`: the mask file and mask report.
#pragma once

#include <string>

#include "recofold/core/provenance.h"
#include "recofold/io/mask_file.h"
#include "recofold/sampling/mask.h"
#include "recofold/sampling/mask_analysis.h"

namespace recofold::cli {

// Mask files: recofold/io/mask_file.h (write_mask_file, read_mask_file).

// The JSON report of `mask --report`: the analysis plus pattern facts.
std::string mask_report_json(const SamplingMask& mask, const MaskAnalysis& analysis);

// One-line summary: "lines-vd 256x256: R 4.000 (requested 4), 16384 samples, centre 20x256, PSF side-lobe -17.3 dB".
std::string mask_summary(const SamplingMask& mask, const MaskAnalysis& analysis);

}  // namespace recofold::cli
