// SPDX-License-Identifier: Apache-2.0
// The pixel-selection operator of inpainting (and, with every pixel kept, the identity of denoising).
#pragma once

#include <string>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/ops/linear_operator.h"

namespace recofold {

// (M x)_p = mask_p x_p with mask_p in {0, 1} on an image [ny, nx]; domain and
// range are both [ny, nx] (unobserved pixels map to 0), so M is diagonal,
// self-adjoint and idempotent: M^H = M, M^H M = M, ||M|| = 1 (0 for an all-zero mask).
class PixelMaskOperator final : public LinearOperator {
 public:
  // `mask` [ny, nx] with values 0/1 (any nonzero counts as 1).
  explicit PixelMaskOperator(const NdArray<uint8_t>& mask);
  void apply(const VecC& x, VecC& y) const override;
  void adjoint(const VecC& y, VecC& x) const override { apply(y, x); }
  void normal(const VecC& x, VecC& out) const override { apply(x, out); }
  Shape domain_shape() const override { return shape_; }
  Shape range_shape() const override { return shape_; }
  Index domain_size() const override { return size_; }
  Index range_size() const override { return size_; }
  std::string name() const override;
  Index kept() const { return kept_; }

 private:
  Shape shape_;
  Index size_ = 0;
  Index kept_ = 0;
  std::vector<float> weight_;  // 0 or 1 per pixel
};

}  // namespace recofold
