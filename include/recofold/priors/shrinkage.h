// SPDX-License-Identifier: Apache-2.0
// Soft thresholding of complex values (the prox of the l1 norm of magnitudes) and its group form.
#pragma once

#include "recofold/core/types.h"

namespace recofold {

// Complex soft threshold: S_t(z) = z * max(0, 1 - t / |z|) (0 when z = 0),
// the exact minimiser of 1/2 |u - z|^2 + t |u| over complex u.
cfloat soft_threshold(cfloat z, double t);

// Group soft threshold of the pair (a, b) with n = sqrt(|a|^2 + |b|^2):
// (a, b) * max(0, 1 - t / n), the prox of t * ||(a, b)||_2.
void group_soft_threshold(cfloat& a, cfloat& b, double t);

}  // namespace recofold
