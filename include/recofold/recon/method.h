// SPDX-License-Identifier: Apache-2.0
// The reconstruction methods: their names (the one string mapping) and where each applies.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/measurement.h"

namespace recofold {

// Every method `recofold recon`, studies and training baselines can run
// (through reconstruct(), recon/reconstruct.h):
//   zero-filled  MRI: inverse FFT of the zero-filled k-space, coils combined;
//                denoise / inpaint: the observed image
//   fbp          CT: filtered back-projection
//   cg           conjugate gradients on the normal equations (CG-SENSE for MRI), prior none or l2 (Tikhonov)
//   ista, fista  proximal gradient (FISTA: accelerated, adaptive restart), any prior
//   admm         ADMM with CG inner solves, a prior with an analysis form (l2, wavelet, tv, tv-aniso)
//   pdhg         primal-dual hybrid gradient (Chambolle-Pock), any prior
//   unrolled     a learned unrolled network from a model file (the learn module)
enum class Method { kZeroFilled, kFbp, kCg, kIsta, kFista, kAdmm, kPdhg, kUnrolled };

std::string_view to_string(Method method);  // "zero-filled", "fbp", "cg", ...
std::optional<Method> parse_method(std::string_view text);
std::string accepted_methods();  // "zero-filled, fbp, cg, ista, fista, admm, pdhg, unrolled"
const std::vector<Method>& all_methods();

// cg, ista, fista, admm, pdhg: the methods that minimise a data term plus a prior.
bool is_iterative(Method method);

// Whether `method` can run on a measurement of `modality` at all:
// zero-filled on mri, denoise and inpaint; fbp on ct; every other method on every modality.
bool runs_on(Method method, Modality modality);

}  // namespace recofold
