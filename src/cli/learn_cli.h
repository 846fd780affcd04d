// SPDX-License-Identifier: Apache-2.0
// Learned-model parts of the CLI: running an unrolled model file on a measurement (used by `recon --method unrolled`).
#pragma once

#include <string>

#include "recofold/core/image_record.h"
#include "recofold/core/measurement.h"

namespace recofold::cli {

// Reconstructs `m` with the learned unrolled model in `model_path`.
// Throws InputError (exit 2) naming the model file when the model cannot be
// read or does not fit the measurement (modality, image size). When the
// measurement's acquisition conditions lie outside the model's trained_on
// ranges, the reconstruction still runs and *warning (if not null) receives
// "measurement outside the training conditions of MODEL: ..."; otherwise it
// is cleared. The record is complex for MRI, real for CT, and carries the
// model path, checksum and architecture as text attributes.
ImageRecord reconstruct_unrolled_record(const Measurement& m, const std::string& model_path, std::string* warning);

}  // namespace recofold::cli
