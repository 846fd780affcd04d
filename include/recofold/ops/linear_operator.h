// SPDX-License-Identifier: Apache-2.0
// The linear-operator interface every forward model, transform and composition implements.
#pragma once

#include <memory>
#include <string>

#include "recofold/core/rng.h"
#include "recofold/core/types.h"

namespace recofold {

// A maps images (domain) to measurements (range); both are flat complex
// vectors whose layouts are given by domain_shape() / range_shape()
// (row-major, slowest axis first). apply() and adjoint() overwrite their
// output (resizing it). Implementations must be safe to call concurrently
// from several threads on different vectors (const methods, no shared scratch
// without locking), so studies can run cases in parallel.
class LinearOperator {
 public:
  virtual ~LinearOperator() = default;
  virtual void apply(const VecC& x, VecC& y) const = 0;    // y = A x
  virtual void adjoint(const VecC& y, VecC& x) const = 0;  // x = A^H y
  virtual Shape domain_shape() const = 0;
  virtual Shape range_shape() const = 0;
  // x_out = A^H A x. Default: adjoint(apply(x)); operators override when a
  // cheaper form exists (e.g. masked Fourier without coil maps).
  virtual void normal(const VecC& x, VecC& out) const;
  // Short description for logs ("SENSE 8 coils 256x256", "Joseph parallel 180 views").
  virtual std::string name() const = 0;

  // Element counts of the two shapes. Operators override these with a
  // computation that builds no Shape (solvers call them every iteration, and
  // a Shape holds a heap-allocated vector).
  virtual Index domain_size() const { return domain_shape().size(); }
  virtual Index range_size() const { return range_shape().size(); }

  // Sums of the absolute matrix entries, when the operator knows them cheaply:
  // row_sums[i] = sum_j |A_ij| (range_size values) and column_sums[j] =
  // sum_i |A_ij| (domain_size values). Returns false (outputs untouched) when
  // it does not. Used for diagonal preconditioning (PDHG).
  virtual bool absolute_sums(VecF& row_sums, VecF& column_sums) const {
    (void)row_sums;
    (void)column_sums;
    return false;
  }
};

// Result of check_adjoint: |<Ax, y> - <x, A^H y>| / (|<Ax,y>|) for random x, y.
struct AdjointReport {
  double relative_error = 0.0;
  cdouble lhs, rhs;  // <Ax, y> and <x, A^H y>, accumulated in double
  std::string to_string() const;
};

// Public adjoint checker for any operator (users' own too): draws complex
// Gaussian x and y from `rng` (real parts only if `real_inputs`).
AdjointReport check_adjoint(const LinearOperator& op, Rng& rng, bool real_inputs = false);

// Largest singular value squared, ||A||^2 = largest eigenvalue of A^H A, by
// power iteration from a seeded random start. Used for step sizes 1/L.
double estimate_norm_squared(const LinearOperator& op, int iterations, uint64_t seed = 1);

// Inner product <a, b> = sum conj(a_i) b_i accumulated in double.
cdouble dot(const VecC& a, const VecC& b);
// Squared 2-norm accumulated in double.
double norm_squared(const VecC& a);

// y = s * A x (s real).
std::unique_ptr<LinearOperator> scaled(std::shared_ptr<const LinearOperator> a, double s);
// y = A (B x): shapes must chain (B's range == A's domain).
std::unique_ptr<LinearOperator> composed(std::shared_ptr<const LinearOperator> a,
                                         std::shared_ptr<const LinearOperator> b);
// Identity on a shape.
std::unique_ptr<LinearOperator> identity(Shape shape);

}  // namespace recofold
