// SPDX-License-Identifier: Apache-2.0
// Forward differences and their adjoint (negative divergence), Neumann or periodic.
#include "recofold/ops/finite_diff.h"

#include "recofold/core/error.h"

namespace recofold {

std::string_view to_string(DiffBoundary boundary) {
  return boundary == DiffBoundary::kPeriodic ? "periodic" : "neumann";
}

std::optional<DiffBoundary> parse_diff_boundary(std::string_view text) {
  if (text == "neumann") return DiffBoundary::kNeumann;
  if (text == "periodic") return DiffBoundary::kPeriodic;
  return std::nullopt;
}

FiniteDifference::FiniteDifference(Shape image_shape, DiffBoundary boundary)
    : shape_(std::move(image_shape)), boundary_(boundary) {
  if (shape_.rank() != 2 || shape_[0] < 1 || shape_[1] < 1)
    throw InputError("", "finite_difference.shape", "needs a 2-D shape [ny, nx], got " + shape_.to_string());
}

std::string FiniteDifference::name() const {
  return "finite differences (" + std::string(to_string(boundary_)) + ") " + std::to_string(shape_[0]) + "x" +
         std::to_string(shape_[1]);
}

void FiniteDifference::apply(const VecC& x, VecC& y) const {
  const Index ny = shape_[0], nx = shape_[1], n = ny * nx;
  RECOFOLD_CHECK(x.size() == n) << "finite differences of size " << x.size() << " for " << shape_.to_string();
  y.resize(2 * n);
  const bool periodic = boundary_ == DiffBoundary::kPeriodic;
  for (Index r = 0; r < ny; ++r) {
    const bool last_r = r == ny - 1;
    const Index rn = last_r ? 0 : r + 1;
    for (Index c = 0; c < nx; ++c) {
      const Index i = r * nx + c;
      y[i] = (last_r && !periodic) ? cfloat(0.f, 0.f) : x[rn * nx + c] - x[i];
      const bool last_c = c == nx - 1;
      const Index cn = last_c ? 0 : c + 1;
      y[n + i] = (last_c && !periodic) ? cfloat(0.f, 0.f) : x[r * nx + cn] - x[i];
    }
  }
}

void FiniteDifference::adjoint(const VecC& y, VecC& x) const {
  const Index ny = shape_[0], nx = shape_[1], n = ny * nx;
  RECOFOLD_CHECK(y.size() == 2 * n) << "finite-difference adjoint of size " << y.size() << " for "
                                    << shape_.to_string();
  x.setZero(n);
  const bool periodic = boundary_ == DiffBoundary::kPeriodic;
  // x = D^H y: each forward difference y_i = x_next - x_i contributes +y_i to
  // x_next and -y_i to x_i (skipped where the boundary rule sets it to 0).
  for (Index r = 0; r < ny; ++r) {
    const bool last_r = r == ny - 1;
    const Index rn = last_r ? 0 : r + 1;
    for (Index c = 0; c < nx; ++c) {
      const Index i = r * nx + c;
      if (!(last_r && !periodic)) {
        x[rn * nx + c] += y[i];
        x[i] -= y[i];
      }
      const bool last_c = c == nx - 1;
      const Index cn = last_c ? 0 : c + 1;
      if (!(last_c && !periodic)) {
        x[r * nx + cn] += y[n + i];
        x[i] -= y[n + i];
      }
    }
  }
}

}  // namespace recofold
