// SPDX-License-Identifier: Apache-2.0
// Non-Cartesian MRI in recon: gridding (the DCF-weighted adjoint NUFFT, the non-Cartesian zero-filled
// baseline) and the SENSE-NUFFT forward model for the iterative methods.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/ops/nufft.h"
#include "recofold/recon/forward_model.h"
#include "recofold/recon/zero_filled.h"

namespace recofold {

// Gridding of multi-coil samples kspace [C, M] on the plan's points:
//   x_c = A^H W y_c     (W = diag(dcf), ops/density_compensation.h: (cycles per FOV)² per sample,
//                        so x_c has the image's scale),
// combined as in zero_filled (sos: sqrt(Σ|x_c|²); sense: Σ conj(S_c) x_c / Σ|S_c|², maps
// [C, ny, nx]). `file` names the data in errors: InputError "/mri/kspace" for a shape other
// than [C, M], "/trajectory/dcf" for a DCF of another length or with negative or non-finite
// weights, "/mri/coil_maps" for maps of another shape or sense without maps (C > 1).
ImageC gridding(const NufftPlan& plan, const std::vector<float>& dcf, const NdArray<cfloat>& kspace,
                const NdArray<cfloat>& coil_maps, CoilCombine combine, const std::string& file = "");

// The forward model of non-Cartesian samples: A = SENSE-NUFFT (ops/nufft.h; normal() by Toeplitz
// embedding), y = kspace [C, M] flattened coil by coil, complex noise σ per part on every value
// (measured_values = C M). Maps empty = one coil with S = 1. InputError as for gridding().
ForwardModel make_trajectory_forward_model(std::shared_ptr<const NufftPlan> plan, const NdArray<cfloat>& kspace,
                                           const NdArray<cfloat>& coil_maps, double noise_sigma,
                                           const std::string& file = "");

}  // namespace recofold
