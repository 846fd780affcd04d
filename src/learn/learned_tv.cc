// SPDX-License-Identifier: Apache-2.0
// Differentiable TV prox: unrolled FGP on the dual.
#include "learned_tv.h"

#include <cmath>

namespace recofold::internal {

namespace F = torch::nn::functional;
using torch::indexing::Slice;

torch::Tensor tv_gradient(const torch::Tensor& x) {
  torch::Tensor dy = x.index({Slice(), Slice(), Slice(1, torch::indexing::None)}) -
                     x.index({Slice(), Slice(), Slice(0, -1)});
  torch::Tensor dx = x.index({Slice(), Slice(), Slice(), Slice(1, torch::indexing::None)}) -
                     x.index({Slice(), Slice(), Slice(), Slice(0, -1)});
  dy = F::pad(dy, F::PadFuncOptions({0, 0, 0, 1}));
  dx = F::pad(dx, F::PadFuncOptions({0, 1, 0, 0}));
  return torch::stack({dy, dx}, 1);
}

torch::Tensor tv_gradient_adjoint(const torch::Tensor& p) {
  // (D0^H q)[r] = q[r-1] (r >= 1) - q[r] (r <= H-2); the same along x.
  torch::Tensor qy = p.select(1, 0).index({Slice(), Slice(), Slice(0, -1)});
  torch::Tensor qx = p.select(1, 1).index({Slice(), Slice(), Slice(), Slice(0, -1)});
  torch::Tensor ay = F::pad(qy, F::PadFuncOptions({0, 0, 1, 0})) - F::pad(qy, F::PadFuncOptions({0, 0, 0, 1}));
  torch::Tensor ax = F::pad(qx, F::PadFuncOptions({1, 0, 0, 0})) - F::pad(qx, F::PadFuncOptions({0, 1, 0, 0}));
  return ay + ax;
}

torch::Tensor tv_value(const torch::Tensor& x) {
  return torch::sqrt(tv_gradient(x).pow(2).sum({1, 2})).sum({1, 2});
}

torch::Tensor tv_prox(const torch::Tensor& v, const torch::Tensor& theta, int iterations) {
  torch::Tensor p = torch::zeros({v.size(0), 2, v.size(1), v.size(2), v.size(3)}, v.options());
  torch::Tensor r = p;
  double t = 1.0;
  for (int k = 0; k < iterations; ++k) {
    torch::Tensor u = v - theta * tv_gradient_adjoint(r);
    torch::Tensor q = r + tv_gradient(u) / (8 * theta);
    torch::Tensor norm = torch::sqrt(q.pow(2).sum({1, 2}, true) + 1e-20).clamp_min(1.0);
    torch::Tensor p_new = q / norm;
    const double t_new = (1 + std::sqrt(1 + 4 * t * t)) / 2;
    r = p_new + ((t - 1) / t_new) * (p_new - p);
    p = p_new;
    t = t_new;
  }
  return v - theta * tv_gradient_adjoint(p);
}

}  // namespace recofold::internal
