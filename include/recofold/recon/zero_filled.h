// SPDX-License-Identifier: Apache-2.0
// Zero-filled reconstruction of MRI data: inverse FFT of each coil and coil combination.
#pragma once

#include <optional>
#include <string>
#include <string_view>

#include "recofold/core/measurement.h"
#include "recofold/core/types.h"

namespace recofold {

enum class CoilCombine {
  // "sos": sqrt(Σ_c |x_c|²), real and non-negative; needs no coil maps.
  kSumOfSquares,
  // "sense": Σ_c conj(S_c) x_c / Σ_c |S_c|² (0 where Σ|S_c|² = 0), complex;
  // with normalised maps this is E^H y, the adjoint of the SENSE operator.
  kSensitivity,
};
std::string_view to_string(CoilCombine c);
std::optional<CoilCombine> parse_coil_combine(std::string_view text);  // "sos" | "sense"

// x_c = F^H y_c for every coil (unsampled points are zero in y: no density
// compensation), combined as above. `file` names the measurement in errors:
// InputError when the k-space, mask or maps disagree in shape, or when
// kSensitivity is asked of data without coil maps.
ImageC zero_filled(const MriData& mri, CoilCombine combine, const std::string& file = "");

}  // namespace recofold
