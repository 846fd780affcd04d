// SPDX-License-Identifier: Apache-2.0
// Differentiable total-variation prox in torch (private to learn): unrolled fast dual gradient projection.
#pragma once

#include <torch/torch.h>

namespace recofold::internal {

// Forward differences with the Neumann rule of ops/finite_diff.h on
// [B, 2, H, W] (real and imaginary channels) -> [B, 2 (y, x), 2, H, W], and the adjoint.
torch::Tensor tv_gradient(const torch::Tensor& x);
torch::Tensor tv_gradient_adjoint(const torch::Tensor& p);

// Isotropic TV of [B, 2, H, W] per image, sum_p sqrt(sum over direction and
// channel of (D x)^2): the penalty of priors/tv.h for complex images. [B].
torch::Tensor tv_value(const torch::Tensor& x);

// u = argmin 1/2 ||u - v||^2 + theta TV(u) approximated by `iterations` steps
// of the fast gradient projection on the dual (Beck & Teboulle, IEEE TIP 18,
// 2009; formulas from memory):
//   u(r) = v - theta D^H r,   p+ = Proj_{|p| <= 1}(r + D u(r) / (8 theta)),
//   FISTA momentum on the dual, from p = 0,
// with every step differentiable, so gradients reach v and theta (a scalar
// tensor > 0) exactly for the unrolled map.
torch::Tensor tv_prox(const torch::Tensor& v, const torch::Tensor& theta, int iterations);

}  // namespace recofold::internal
