// SPDX-License-Identifier: Apache-2.0
// Orthogonal periodised multi-level 2-D wavelet transform (Haar/db1 … db4) as a LinearOperator.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/ops/linear_operator.h"

namespace recofold {

// Daubechies orthogonal wavelets with N vanishing moments (filter length 2N);
// db1 is the Haar wavelet. Filters from Daubechies, "Ten Lectures on Wavelets"
// (1992), Table 6.1 (db3/db4 digits as printed by PyWavelets), checked against
// PyWavelets transforms (tests/reference/ops_wavelet_pywt.py) and by
// orthonormality and perfect reconstruction (unit test).
enum class WaveletFamily { kDb1, kDb2, kDb3, kDb4 };

// "db1" ("haar" is accepted by parse_wavelet and maps to kDb1), "db2", "db3", "db4".
std::string_view to_string(WaveletFamily family);
std::optional<WaveletFamily> parse_wavelet(std::string_view text);
// "db1, db2, db3, db4, haar" for error messages.
std::string accepted_wavelets();

// Decomposition low-pass filter h (sum h = sqrt 2, sum h^2 = 1), in the same
// order as PyWavelets' Wavelet(name).dec_lo.
std::vector<double> wavelet_lowpass(WaveletFamily family);

// Orientation of a sub-band. Letters name the filter along (axis 0 = rows/y,
// axis 1 = columns/x): kLowHigh = low-pass along y, high-pass along x, which
// responds to vertical edges.
enum class SubBandOrientation { kApproximation, kLowHigh, kHighLow, kHighHigh };

// A rectangular block of the packed coefficient image.
struct SubBand {
  int level = 0;  // 1 = finest details; `levels` = coarsest; the approximation has level = levels
  SubBandOrientation orientation = SubBandOrientation::kApproximation;
  Index row0 = 0, col0 = 0;  // top-left corner in the packed [ny, nx] coefficient image
  Index rows = 0, cols = 0;
};

// W: images [ny, nx] -> packed coefficients [ny, nx], orthogonal (W^H W = I,
// ||W x|| = ||x||), so adjoint() is the inverse transform.
//
// One level on a signal s of even length n (periodic extension):
//   a[k] = sum_j h[j] s[(2k + L/2 - j) mod n],   d[k] = sum_j g[j] s[(2k + L/2 - j) mod n],
//   g[j] = (-1)^(j+1) h[L-1-j],  L = filter length,  k = 0 .. n/2-1,
// the convention of PyWavelets' mode="periodization". The 2-D level filters
// rows (axis 1, x) then columns (axis 0, y) and recurses on the approximation.
//
// Packed layout (identical to PyWavelets
// coeffs_to_array(wavedec2(x, "dbN", mode="periodization", level=L))):
// with hL = ny / 2^L and wL = nx / 2^L the approximation fills [0, hL) x [0, wL);
// the details of level l (h = ny / 2^l, w = nx / 2^l) fill
//   [0, h) x [w, 2w)    low-pass y, high-pass x  (kLowHigh; pywt key "ad", wavedec2 tuple item 1, cV)
//   [h, 2h) x [0, w)    high-pass y, low-pass x  (kHighLow; pywt key "da", tuple item 0, cH)
//   [h, 2h) x [w, 2w)   high-pass both           (kHighHigh; pywt key "dd", tuple item 2)
//
// Complex images are transformed with real filters, i.e. real and imaginary
// parts separately. Requires ny and nx divisible by 2^levels (so every level
// halves an even size); the constructor throws InputError otherwise. Thread-safe.
class WaveletTransform final : public LinearOperator {
 public:
  // shape: {ny, nx}; levels >= 1.
  WaveletTransform(Shape shape, WaveletFamily family, int levels);

  void apply(const VecC& x, VecC& y) const override;    // forward transform
  void adjoint(const VecC& y, VecC& x) const override;  // inverse transform
  void normal(const VecC& x, VecC& out) const override { out = x; }
  Shape domain_shape() const override { return shape_; }
  Shape range_shape() const override { return shape_; }
  Index domain_size() const override { return shape_.size(); }
  Index range_size() const override { return shape_.size(); }
  std::string name() const override;

  WaveletFamily family() const { return family_; }
  int levels() const { return levels_; }

  // All sub-bands: the approximation first, then details from the coarsest
  // level (levels) to the finest (1), each as kLowHigh, kHighLow, kHighHigh.
  // Index i of this list is the band id used by band_index().
  std::vector<SubBand> sub_bands() const;
  // For every packed coefficient (row-major), the id of its sub-band in
  // sub_bands(); 0 is the approximation. Used for per-band thresholds.
  std::vector<int> band_index() const;

 private:
  Shape shape_;
  WaveletFamily family_;
  int levels_;
  std::vector<float> lo_, hi_;
};

// Circular shift of a row-major [ny, nx] image: out(r, c) = in((r - dy) mod ny, (c - dx) mod nx).
// Used for cycle spinning (shift, transform, threshold, inverse, shift back by -dy, -dx).
void circular_shift(const VecC& in, const Shape& shape, Index dy, Index dx, VecC& out);

}  // namespace recofold
