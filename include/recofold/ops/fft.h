// SPDX-License-Identifier: Apache-2.0
// Centred orthonormal 2-D FFT (FFTW, single precision) as functions and as a LinearOperator.
#pragma once

#include <string>

#include "recofold/core/types.h"
#include "recofold/ops/linear_operator.h"

namespace recofold {

// Threads FFTW may use for one transform, and the most threads the multi-coil
// operators use to run coils side by side. 0 means "all cores"
// (omp_get_max_threads()). The CLI sets it from --threads. Plans are cached
// per (size, direction, threads), so changing it later only costs new plans.
void set_fft_threads(int threads);
// The current setting resolved to a count >= 1.
int fft_threads();

// Planning effort for plans made from now on: true (default) = FFTW_MEASURE
// (times candidate algorithms once per size, direction and thread count,
// at most 1 s per plan via fftwf_set_timelimit; measured here at 256^2 it
// gives ~10x faster transforms than FFTW_ESTIMATE, which pays back after a few
// dozen transforms); false = FFTW_ESTIMATE (instant planning, for one-off
// transforms of many different sizes). Existing plans are kept.
// Reproducibility: FFTW_MEASURE picks algorithms by timing, so two processes
// may round differently in the last bits; FFTW_ESTIMATE plans (or imported
// wisdom) give the same bytes every run for a given thread count. The CLI's
// one-off transforms (mask analysis, simulation, zero-filled) use ESTIMATE.
void set_fft_measure(bool measure);

// FFTW wisdom (optional): import a wisdom file made by a previous run so that
// FFTW_MEASURE planning is instant; export the current wisdom. Both return
// false when the file cannot be read / written (not an error: wisdom is a cache).
bool import_fft_wisdom(const std::string& path);
bool export_fft_wisdom(const std::string& path);

enum class FftDirection { kForward, kInverse };

// Centred orthonormal 2-D DFT of one row-major [ny, nx] image (DEVELOPERS.md "Sources"):
//   forward: out = fftshift(fft2(ifftshift(in))) / sqrt(ny nx)
//   inverse: out = fftshift(ifft2(ifftshift(in))) * sqrt(ny nx)   (= adjoint = inverse)
// i.e. numpy's np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(x), norm="ortho"))
// and the same with ifft2. Odd and even sizes. `in` and `out` may be the same
// buffer; any alignment is fine. Thread-safe.
void fft2c(const cfloat* in, cfloat* out, Index ny, Index nx, FftDirection direction);
// Plans of one call: kSetting follows set_fft_measure; kEstimate always uses
// FFTW_ESTIMATE plans (the same bytes in every process, whatever else it ran:
// FBP's view filtering, so a direct method does not depend on planning).
enum class FftPlanning { kSetting, kEstimate };
void fft2c(const cfloat* in, cfloat* out, Index ny, Index nx, FftDirection direction, FftPlanning planning);
// Same, on images.
ImageC fft2c(const ImageC& image);   // forward
ImageC ifft2c(const ImageC& kspace);  // inverse
// Each [ny, nx] slice of a stack [count, ny, nx], in place (slices in parallel).
void fft2c_stack(NdArray<cfloat>& stack, FftDirection direction);

// The centred orthonormal FFT as an operator: domain and range [ny, nx],
// apply = forward, adjoint = inverse, normal = identity.
class CenteredFft final : public LinearOperator {
 public:
  CenteredFft(Index ny, Index nx);
  void apply(const VecC& x, VecC& y) const override;
  void adjoint(const VecC& y, VecC& x) const override;
  void normal(const VecC& x, VecC& out) const override { out = x; }
  Shape domain_shape() const override { return Shape{ny_, nx_}; }
  Shape range_shape() const override { return Shape{ny_, nx_}; }
  Index domain_size() const override { return ny_ * nx_; }
  Index range_size() const override { return ny_ * nx_; }
  std::string name() const override;

 private:
  Index ny_, nx_;
};

}  // namespace recofold
