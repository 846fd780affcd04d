// SPDX-License-Identifier: Apache-2.0
// libtorch bridge (private to learn): recofold LinearOperators as autograd functions, and a CG solve differentiated through.
#pragma once

#include <torch/torch.h>

#include <memory>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/ops/linear_operator.h"

namespace recofold::internal {

// The operators of one batch: example b uses s_b A_b (A_b = ops[b], s_b =
// scale[b]). All domains share one shape [ny, nx]; ranges may differ in size
// (CT examples with different view counts), so range tensors are flat and
// padded with zeros to the largest range size (padding never reaches an
// operator and stays zero).
//
// Tensor layout: complex vectors travel as real tensors with the real and
// imaginary parts as 2 channels, [B, 2, ny, nx] for images and [B, 2, R] for
// measurements, the layout the CNN layers consume. Crossing the bridge costs
// one pass over the data in each direction, which also interleaves/splits the
// channels: recofold operators take owned Eigen vectors, so the data cannot
// be handed over in place.
struct OperatorBatch {
  std::vector<std::shared_ptr<const LinearOperator>> ops;
  std::vector<float> scale;
  Index ny = 0, nx = 0;
  Index range_size = 0;  // max over the batch

  int64_t size() const { return static_cast<int64_t>(ops.size()); }
};

// Builds a batch of unscaled (s = 1) operators; checks that the domains agree.
OperatorBatch make_operator_batch(std::vector<std::shared_ptr<const LinearOperator>> ops);

// Differentiable maps. In the real 2-channel representation the transpose of
// A is the representation of A^H (Re<A x, y> = Re<x, A^H y>), so each
// backward pass is the operator's adjoint:
//   op_apply:   [B,2,ny,nx] -> [B,2,R],     s A x      (backward s A^H)
//   op_adjoint: [B,2,R]     -> [B,2,ny,nx], s A^H y    (backward s A)
//   op_normal:  [B,2,ny,nx] -> [B,2,ny,nx], s^2 A^H A x (self-adjoint)
// Examples run in parallel (OpenMP) when B > 1. The batch must outlive the
// backward pass of every tensor built from it.
torch::Tensor op_apply(const torch::Tensor& x, const OperatorBatch& batch);
torch::Tensor op_adjoint(const torch::Tensor& y, const OperatorBatch& batch);
torch::Tensor op_normal(const torch::Tensor& x, const OperatorBatch& batch);

// x = (s^2 A^H A + mu I)^{-1} rhs for every example, by `iterations` CG steps
// from x = 0 (stopping early when the residual falls below 1e-6 of ||rhs||).
// mu: a scalar tensor > 0. Differentiable in rhs and mu: the system matrix is
// self-adjoint, so grad_rhs = (s^2 A^H A + mu I)^{-1} grad_x (a second CG
// solve) and grad_mu = -<grad_rhs, x> (MoDL, DEVELOPERS.md "Sources").
torch::Tensor cg_solve(const torch::Tensor& rhs, const torch::Tensor& mu, const OperatorBatch& batch, int iterations);

// Makes torch's intra-op thread count equal to OpenMP's current maximum
// (omp_get_max_threads(), which the CLI sets from --threads). Torch otherwise
// initialises its OpenMP pool lazily, on its first parallel operation, to the
// number of physical cores, which would change the thread count of recofold's
// own OpenMP code between two calls (and with it the summation order, so
// results would not repeat bit for bit). Called at every learn entry point.
void align_torch_threads();

// Conversions for one example (no autograd): a complex vector of `shape`
// to a [2, ...shape] tensor and back.
torch::Tensor to_channels(const VecC& v, const Shape& shape);
VecC from_channels(const torch::Tensor& t);

}  // namespace recofold::internal
