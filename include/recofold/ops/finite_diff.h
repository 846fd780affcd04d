// SPDX-License-Identifier: Apache-2.0
// Forward finite differences of a 2-D image (the discrete gradient) as a LinearOperator.
#pragma once

#include <optional>
#include <string>
#include <string_view>

#include "recofold/ops/linear_operator.h"

namespace recofold {

// What the forward difference does at the last row/column.
enum class DiffBoundary {
  // Neumann (zero flux, Rudin–Osher–Fatemi / Chambolle 2004 convention): the
  // difference across the last row (column) is 0. Non-periodic images.
  kNeumann,
  // Periodic: the last row (column) is differenced against the first.
  kPeriodic,
};

std::string_view to_string(DiffBoundary boundary);  // "neumann", "periodic"
std::optional<DiffBoundary> parse_diff_boundary(std::string_view text);

// D (the discrete gradient): images [ny, nx] -> [2, ny, nx] with
//   (D x)[0, r, c] = x[r+1, c] - x[r, c]   (along axis 0, y)
//   (D x)[1, r, c] = x[r, c+1] - x[r, c]   (along axis 1, x)
// and the boundary rule above for r = ny-1 (c = nx-1). adjoint() is
// -divergence. ||D||^2 <= 8 for both boundaries (each component's norm
// squared is at most 4). Thread-safe.
class FiniteDifference final : public LinearOperator {
 public:
  FiniteDifference(Shape image_shape, DiffBoundary boundary = DiffBoundary::kNeumann);

  void apply(const VecC& x, VecC& y) const override;
  void adjoint(const VecC& y, VecC& x) const override;
  Shape domain_shape() const override { return shape_; }
  Shape range_shape() const override { return Shape{2, shape_[0], shape_[1]}; }
  Index domain_size() const override { return shape_[0] * shape_[1]; }
  Index range_size() const override { return 2 * shape_[0] * shape_[1]; }
  std::string name() const override;
  // Exact: each row holds one +1 and one -1 (none on a Neumann boundary
  // row), each column up to four entries of magnitude 1.
  bool absolute_sums(VecF& row_sums, VecF& column_sums) const override;

  DiffBoundary boundary() const { return boundary_; }
  // Upper bound of ||D||^2 used for step sizes: 8.
  static constexpr double kNormSquaredBound = 8.0;

 private:
  Shape shape_;
  DiffBoundary boundary_;
};

}  // namespace recofold
