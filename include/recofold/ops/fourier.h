// SPDX-License-Identifier: Apache-2.0
// Masked multi-coil Fourier operator E = M F S (SENSE; single coil and fully sampled as special cases).
#pragma once

#include <memory>
#include <string>

#include "recofold/core/measurement.h"
#include "recofold/core/types.h"
#include "recofold/ops/linear_operator.h"

namespace recofold {

// E maps an image x [ny, nx] to multi-coil k-space y [C, ny, nx]:
//   y_c = M ∘ F(S_c ∘ x),            c = 0 .. C-1      (apply)
//   x   = Σ_c conj(S_c) ∘ F^H(M ∘ y_c)                  (adjoint)
//   E^H E x = Σ_c conj(S_c) ∘ F^H(M ∘ F(S_c ∘ x))        (normal, fused: no range vector)
// F is the centred orthonormal 2-D DFT (fft.h), M the 0/1 sampling mask
// (unsampled k-space points are zero in y, the layout of /mri/kspace), S_c the
// coil sensitivities. SENSE: Pruessmann et al., MRM 42 (1999). With maps
// normalised so Σ_c |S_c|² = 1 and a full mask, E^H E = I and ||E|| = 1.
//
// Coils run in parallel (OpenMP, up to fft_threads()); a single coil uses
// multi-threaded FFTs instead. Thread-safe (per-thread scratch buffers).
class MaskedFourier final : public LinearOperator {
 public:
  // ny, nx: image grid (> 0). mask: [ny, nx], 1 = sampled; an empty array
  // means fully sampled. coil_maps: [C, ny, nx], C >= 1; an empty array means
  // one coil with S = 1. Shapes are checked (RECOFOLD_CHECK: callers validate
  // user input first, e.g. with make_sense_operator).
  MaskedFourier(Index ny, Index nx, NdArray<uint8_t> mask = {}, NdArray<cfloat> coil_maps = {});

  void apply(const VecC& x, VecC& y) const override;
  void adjoint(const VecC& y, VecC& x) const override;
  void normal(const VecC& x, VecC& out) const override;
  Shape domain_shape() const override { return Shape{ny_, nx_}; }
  Shape range_shape() const override { return Shape{coils_, ny_, nx_}; }
  Index domain_size() const override { return ny_ * nx_; }
  Index range_size() const override { return coils_ * ny_ * nx_; }
  std::string name() const override;  // "SENSE 8 coils 256x256, R 4.00"

  Index coils() const { return coils_; }
  Index ny() const { return ny_; }
  Index nx() const { return nx_; }
  bool has_coil_maps() const { return !maps_.data.empty(); }
  const NdArray<uint8_t>& mask() const { return mask_; }  // [ny, nx] (all ones when built without a mask)
  const NdArray<cfloat>& coil_maps() const { return maps_; }

 private:
  void forward_coil(const cfloat* x, Index c, cfloat* yc) const;
  // acc += conj(S_c) ∘ F^H(M ∘ yc)
  void adjoint_coil_accumulate(const cfloat* yc, Index c, cfloat* acc) const;
  void normal_coil_accumulate(const cfloat* x, Index c, cfloat* acc) const;
  // Even sizes: buf = (S_c ⊙ chk) ⊙ x, and acc += conj(S_c ⊙ chk) ⊙ buf.
  void pre_multiply(const cfloat* x, Index c, cfloat* buf) const;
  void post_accumulate(const cfloat* buf, Index c, cfloat* acc) const;

  Index ny_, nx_, coils_;
  // Even sizes skip the centring shifts: for even n, fftshift(fft(ifftshift(v)))
  // = (-1)^(n/2) chk ⊙ fft(chk ⊙ v) per axis with chk = (-1)^index, so the
  // checkerboard folds into the coil maps and the mask and every pass is a
  // plain contiguous loop.
  bool even_ = false;
  std::vector<float> weight_;       // even: mask ⊙ chk ⊙ sign / sqrt(ny nx)
  std::vector<float> mask_scaled_;  // even: mask / (ny nx), for normal()
  std::vector<cfloat> maps_chk_;    // even with maps: S_c ⊙ chk
  std::vector<float> chk_;          // even without maps: chk
  NdArray<uint8_t> mask_;      // centred order
  std::vector<float> mask_native_;  // mask in FFT order times 1/(ny nx), for normal()
  NdArray<cfloat> maps_;       // empty = S = 1
  double sampled_fraction_ = 1.0;
};

// The SENSE operator of an MRI measurement: its mask and coil maps
// (/mri/mask, /mri/coil_maps). `file` names the measurement in errors:
// InputError when the mask is not [ny, nx] of the k-space or the maps are not
// [coils, ny, nx].
std::unique_ptr<MaskedFourier> make_sense_operator(const MriData& mri, const std::string& file = "");

// The measured data of `mri` as the operator's range vector (y, [C, ny, nx] flat).
VecC kspace_vector(const MriData& mri);

}  // namespace recofold
