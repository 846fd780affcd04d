// SPDX-License-Identifier: Apache-2.0
// Pixel-selection operator (ops/pixel_mask.h).
#include "recofold/ops/pixel_mask.h"

#include "recofold/core/error.h"

namespace recofold {

PixelMaskOperator::PixelMaskOperator(const NdArray<uint8_t>& mask) : shape_(mask.shape), size_(mask.size()) {
  RECOFOLD_CHECK(mask.shape.rank() == 2) << "pixel mask must be [ny, nx], got " << mask.shape.to_string();
  weight_.resize(static_cast<size_t>(size_));
  for (Index p = 0; p < size_; ++p) {
    const bool keep = mask.data[static_cast<size_t>(p)] != 0;
    weight_[static_cast<size_t>(p)] = keep ? 1.0f : 0.0f;
    kept_ += keep;
  }
}

void PixelMaskOperator::apply(const VecC& x, VecC& y) const {
  RECOFOLD_CHECK(x.size() == size_) << "pixel mask operator: input size " << x.size() << ", expected " << size_;
  y.resize(size_);
  for (Index p = 0; p < size_; ++p) y[p] = x[p] * weight_[static_cast<size_t>(p)];
}

std::string PixelMaskOperator::name() const {
  return (kept_ == size_ ? std::string("identity ") : "pixel mask " + std::to_string(kept_) + " of ") +
         std::to_string(shape_[0]) + "x" + std::to_string(shape_[1]);
}

}  // namespace recofold
