// SPDX-License-Identifier: Apache-2.0
// Zero-filled MRI reconstruction with sum-of-squares or sensitivity-weighted coil combination.
#include "recofold/recon/zero_filled.h"

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/ops/fft.h"

namespace recofold {

std::string_view to_string(CoilCombine c) { return c == CoilCombine::kSumOfSquares ? "sos" : "sense"; }

std::optional<CoilCombine> parse_coil_combine(std::string_view text) {
  if (text == "sos") return CoilCombine::kSumOfSquares;
  if (text == "sense") return CoilCombine::kSensitivity;
  return std::nullopt;
}

ImageC zero_filled(const MriData& mri, CoilCombine combine, const std::string& file) {
  if (mri.kspace.shape.rank() != 3 || mri.kspace.size() == 0)
    throw InputError(file, "/mri/kspace", "expected [coils, ny, nx], got " + mri.kspace.shape.to_string());
  const Index c_count = mri.kspace.shape[0], ny = mri.kspace.shape[1], nx = mri.kspace.shape[2], n = ny * nx;
  if (mri.mask.shape != Shape{ny, nx})
    throw InputError(file, "/mri/mask", "shape " + mri.mask.shape.to_string() + ", k-space is " +
                                            mri.kspace.shape.to_string());
  const bool have_maps = !mri.coil_maps.data.empty();
  if (have_maps && mri.coil_maps.shape != mri.kspace.shape)
    throw InputError(file, "/mri/coil_maps", "shape " + mri.coil_maps.shape.to_string() + ", k-space is " +
                                                 mri.kspace.shape.to_string());
  if (combine == CoilCombine::kSensitivity && !have_maps && c_count > 1)
    throw InputError(file, "/mri/coil_maps", "the sensitivity-weighted combination (sense) needs coil maps; use sos");
  NdArray<cfloat> images = mri.kspace;
  for (Index c = 0; c < c_count; ++c)  // zero-fill: only sampled points count
    for (Index i = 0; i < n; ++i)
      if (!mri.mask.data[static_cast<size_t>(i)]) images.data[static_cast<size_t>(c * n + i)] = cfloat(0.0f, 0.0f);
  fft2c_stack(images, FftDirection::kInverse);
  ImageC out(ny, nx);
#pragma omp parallel for schedule(static)
  for (Index i = 0; i < n; ++i) {
    if (combine == CoilCombine::kSumOfSquares) {
      double s = 0.0;
      for (Index c = 0; c < c_count; ++c) s += std::norm(std::complex<double>(images.data[static_cast<size_t>(c * n + i)]));
      out.data()[i] = cfloat(static_cast<float>(std::sqrt(s)), 0.0f);
    } else if (!have_maps) {
      out.data()[i] = images.data[static_cast<size_t>(i)];
    } else {
      std::complex<double> num(0.0, 0.0);
      double den = 0.0;
      for (Index c = 0; c < c_count; ++c) {
        const std::complex<double> s(mri.coil_maps.data[static_cast<size_t>(c * n + i)]);
        num += std::conj(s) * std::complex<double>(images.data[static_cast<size_t>(c * n + i)]);
        den += std::norm(s);
      }
      const std::complex<double> v = den > 0.0 ? num / den : std::complex<double>(0.0, 0.0);
      out.data()[i] = cfloat(static_cast<float>(v.real()), static_cast<float>(v.imag()));
    }
  }
  return out;
}

}  // namespace recofold
