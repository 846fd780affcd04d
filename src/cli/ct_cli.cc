// SPDX-License-Identifier: Apache-2.0
// CT parts of simulate/recon. Replaced by the projection-acquisition work;
// until then every entry refuses with exit code 2.
#include "ct_cli.h"

#include "recofold/core/error.h"

namespace recofold::cli {

void add_ct_simulate_flags(CLI::App&, CtSimulateFlags&) {}

Measurement simulate_ct_measurement(const CtSimulateFlags&, const Phantom*, const NdArray<cfloat>&, double, bool,
                                    uint64_t) {
  throw InputError("", "--modality", "ct is not available in this build yet");
}

void add_ct_recon_flags(CLI::App&, CtReconFlags&) {}

ImageRecord reconstruct_fbp_record(const Measurement&, const CtReconFlags&) {
  throw InputError("", "--method", "fbp is not available in this build yet");
}

}  // namespace recofold::cli
