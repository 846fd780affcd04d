// SPDX-License-Identifier: Apache-2.0
// Masked multi-coil Fourier operator (SENSE) with fused shift, coil and mask passes around each FFT.
#include "recofold/ops/fourier.h"

#include <omp.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <vector>

#include "fft_plan_cache.h"
#include "recofold/core/error.h"
#include "recofold/ops/fft.h"

namespace recofold {

namespace {

// Threads for running coils side by side: none when already inside a parallel
// region (a study running cases in parallel).
int coil_threads(Index coils) {
  if (omp_in_parallel() || coils < 2) return 1;
  return static_cast<int>(std::min<Index>(coils, fft_threads()));
}

// FFTW threads for one transform: all when a single transform runs alone.
int transform_threads(Index coils) {
  if (omp_in_parallel() || coils > 1) return 1;
  return fft_threads();
}

}  // namespace

MaskedFourier::MaskedFourier(Index ny, Index nx, NdArray<uint8_t> mask, NdArray<cfloat> coil_maps)
    : ny_(ny), nx_(nx), coils_(1), mask_(std::move(mask)), maps_(std::move(coil_maps)) {
  RECOFOLD_CHECK(ny > 0 && nx > 0) << "MaskedFourier of size " << ny << "x" << nx;
  if (mask_.data.empty()) mask_ = NdArray<uint8_t>(Shape{ny, nx}, 1);
  RECOFOLD_CHECK(mask_.shape == (Shape{ny, nx})) << "mask " << mask_.shape.to_string() << " for a " << ny << "x"
                                                 << nx << " grid";
  if (!maps_.data.empty()) {
    RECOFOLD_CHECK(maps_.shape.rank() == 3 && maps_.shape[0] >= 1 && maps_.shape[1] == ny && maps_.shape[2] == nx)
        << "coil maps " << maps_.shape.to_string() << " for a " << ny << "x" << nx << " grid";
    coils_ = maps_.shape[0];
  }
  const Index n = ny * nx;
  Index sampled = 0;
  for (uint8_t m : mask_.data) {
    RECOFOLD_CHECK(m <= 1) << "mask values must be 0 or 1";
    sampled += m;
  }
  sampled_fraction_ = static_cast<double>(sampled) / static_cast<double>(n);
  mask_native_.assign(static_cast<size_t>(n), 0.0f);
  const float inv_n = static_cast<float>(1.0 / static_cast<double>(n));
  const uint8_t* m = mask_.ptr();
  internal::for_each_shifted(ny, nx, internal::to_fft_order_shift(ny), internal::to_fft_order_shift(nx),
                             [&](Index d, Index s) { mask_native_[static_cast<size_t>(d)] = m[s] ? inv_n : 0.0f; });
  even_ = ny % 2 == 0 && nx % 2 == 0;
  if (even_) {
    const float sign = ((ny / 2 + nx / 2) % 2 == 0) ? 1.0f : -1.0f;
    const float scale = static_cast<float>(1.0 / std::sqrt(static_cast<double>(n)));
    std::vector<float> chk(static_cast<size_t>(n));
    for (Index iy = 0; iy < ny; ++iy)
      for (Index ix = 0; ix < nx; ++ix) chk[static_cast<size_t>(iy * nx + ix)] = ((iy + ix) % 2 == 0) ? 1.0f : -1.0f;
    weight_.resize(static_cast<size_t>(n));
    mask_scaled_.resize(static_cast<size_t>(n));
    for (Index i = 0; i < n; ++i) {
      const size_t k = static_cast<size_t>(i);
      weight_[k] = m[i] ? chk[k] * sign * scale : 0.0f;
      mask_scaled_[k] = m[i] ? inv_n : 0.0f;
    }
    if (has_coil_maps()) {
      maps_chk_.resize(maps_.data.size());
      for (size_t k = 0; k < maps_chk_.size(); ++k) maps_chk_[k] = maps_.data[k] * chk[k % static_cast<size_t>(n)];
    } else {
      chk_ = std::move(chk);
    }
  }
}

std::string MaskedFourier::name() const {
  char buf[128];
  std::snprintf(buf, sizeof buf, "%s %lld coil%s %lldx%lld, R %.2f", has_coil_maps() ? "SENSE" : "masked Fourier",
                static_cast<long long>(coils_), coils_ == 1 ? "" : "s", static_cast<long long>(ny_),
                static_cast<long long>(nx_), sampled_fraction_ > 0 ? 1.0 / sampled_fraction_ : 0.0);
  return buf;
}

void MaskedFourier::forward_coil(const cfloat* x, Index c, cfloat* yc) const {
  const Index n = ny_ * nx_;
  cfloat* buf = internal::fft_scratch(static_cast<size_t>(n), 1);
  if (even_) {
    pre_multiply(x, c, buf);
    internal::fft_execute_inplace(buf, ny_, nx_, FftDirection::kForward, transform_threads(coils_));
    const float* w = weight_.data();
    for (Index i = 0; i < n; ++i) yc[i] = buf[i] * w[i];
    return;
  }
  const Index sy = internal::to_fft_order_shift(ny_), sx = internal::to_fft_order_shift(nx_);
  if (has_coil_maps()) {
    const cfloat* s = maps_.ptr() + c * n;
    internal::for_each_shifted(ny_, nx_, sy, sx, [&](Index d, Index q) { buf[d] = internal::mul(s[q], x[q]); });
  } else {
    internal::for_each_shifted(ny_, nx_, sy, sx, [&](Index d, Index q) { buf[d] = x[q]; });
  }
  internal::fft_execute_inplace(buf, ny_, nx_, FftDirection::kForward, transform_threads(coils_));
  const float scale = static_cast<float>(1.0 / std::sqrt(static_cast<double>(n)));
  const uint8_t* m = mask_.ptr();
  internal::for_each_shifted(ny_, nx_, internal::to_centred_shift(ny_), internal::to_centred_shift(nx_),
                             [&](Index d, Index q) { yc[d] = m[d] ? buf[q] * scale : cfloat(0.0f, 0.0f); });
}

void MaskedFourier::adjoint_coil_accumulate(const cfloat* yc, Index c, cfloat* acc) const {
  const Index n = ny_ * nx_;
  cfloat* buf = internal::fft_scratch(static_cast<size_t>(n), 1);
  if (even_) {
    const float* w = weight_.data();
    for (Index i = 0; i < n; ++i) buf[i] = yc[i] * w[i];
    internal::fft_execute_inplace(buf, ny_, nx_, FftDirection::kInverse, transform_threads(coils_));
    post_accumulate(buf, c, acc);
    return;
  }
  const uint8_t* m = mask_.ptr();
  internal::for_each_shifted(ny_, nx_, internal::to_fft_order_shift(ny_), internal::to_fft_order_shift(nx_),
                             [&](Index d, Index q) { buf[d] = m[q] ? yc[q] : cfloat(0.0f, 0.0f); });
  internal::fft_execute_inplace(buf, ny_, nx_, FftDirection::kInverse, transform_threads(coils_));
  const float scale = static_cast<float>(1.0 / std::sqrt(static_cast<double>(n)));
  const Index sy = internal::to_centred_shift(ny_), sx = internal::to_centred_shift(nx_);
  if (has_coil_maps()) {
    const cfloat* s = maps_.ptr() + c * n;
    internal::for_each_shifted(ny_, nx_, sy, sx,
                               [&](Index d, Index q) { acc[d] += internal::mul_conj(s[d], buf[q]) * scale; });
  } else {
    internal::for_each_shifted(ny_, nx_, sy, sx, [&](Index d, Index q) { acc[d] += buf[q] * scale; });
  }
}

void MaskedFourier::normal_coil_accumulate(const cfloat* x, Index c, cfloat* acc) const {
  const Index n = ny_ * nx_;
  cfloat* buf = internal::fft_scratch(static_cast<size_t>(n), 1);
  if (even_) {
    const int threads = transform_threads(coils_);
    pre_multiply(x, c, buf);
    internal::fft_execute_inplace(buf, ny_, nx_, FftDirection::kForward, threads);
    const float* w = mask_scaled_.data();  // the two checkerboards cancel
    for (Index i = 0; i < n; ++i) buf[i] *= w[i];
    internal::fft_execute_inplace(buf, ny_, nx_, FftDirection::kInverse, threads);
    post_accumulate(buf, c, acc);
    return;
  }
  const cfloat* s = has_coil_maps() ? maps_.ptr() + c * n : nullptr;
  const Index sy = internal::to_fft_order_shift(ny_), sx = internal::to_fft_order_shift(nx_);
  if (s) {
    internal::for_each_shifted(ny_, nx_, sy, sx, [&](Index d, Index q) { buf[d] = internal::mul(s[q], x[q]); });
  } else {
    internal::for_each_shifted(ny_, nx_, sy, sx, [&](Index d, Index q) { buf[d] = x[q]; });
  }
  const int threads = transform_threads(coils_);
  internal::fft_execute_inplace(buf, ny_, nx_, FftDirection::kForward, threads);
  const float* w = mask_native_.data();  // mask and 1/(ny nx) of the two unnormalised transforms
  for (Index i = 0; i < n; ++i) buf[i] *= w[i];
  internal::fft_execute_inplace(buf, ny_, nx_, FftDirection::kInverse, threads);
  const Index cy = internal::to_centred_shift(ny_), cx = internal::to_centred_shift(nx_);
  if (s) {
    internal::for_each_shifted(ny_, nx_, cy, cx, [&](Index d, Index q) { acc[d] += internal::mul_conj(s[d], buf[q]); });
  } else {
    internal::for_each_shifted(ny_, nx_, cy, cx, [&](Index d, Index q) { acc[d] += buf[q]; });
  }
}

void MaskedFourier::pre_multiply(const cfloat* x, Index c, cfloat* buf) const {
  const Index n = ny_ * nx_;
  if (has_coil_maps()) {
    const cfloat* s = maps_chk_.data() + c * n;
    for (Index i = 0; i < n; ++i) buf[i] = internal::mul(s[i], x[i]);
  } else {
    const float* k = chk_.data();
    for (Index i = 0; i < n; ++i) buf[i] = x[i] * k[i];
  }
}

void MaskedFourier::post_accumulate(const cfloat* buf, Index c, cfloat* acc) const {
  const Index n = ny_ * nx_;
  if (has_coil_maps()) {
    const cfloat* s = maps_chk_.data() + c * n;
    for (Index i = 0; i < n; ++i) acc[i] += internal::mul_conj(s[i], buf[i]);
  } else {
    const float* k = chk_.data();
    for (Index i = 0; i < n; ++i) acc[i] += buf[i] * k[i];
  }
}

void MaskedFourier::apply(const VecC& x, VecC& y) const {
  const Index n = ny_ * nx_;
  RECOFOLD_CHECK(x.size() == n) << name() << ": apply to " << x.size() << " values";
  y.resize(coils_ * n);
  const int threads = coil_threads(coils_);
  if (threads > 1) {  // explicit serial branch: no one-thread OpenMP regions (they allocate a team each time)
#pragma omp parallel for num_threads(threads) schedule(static)
    for (Index c = 0; c < coils_; ++c) forward_coil(x.data(), c, y.data() + c * n);
  } else {
    for (Index c = 0; c < coils_; ++c) forward_coil(x.data(), c, y.data() + c * n);
  }
}

namespace {

// Runs `per_coil(c, acc)` for every coil, each thread accumulating into its own
// zeroed image, then sums the per-thread images in thread order (deterministic
// for a given thread count) into `out`.
template <typename F>
void accumulate_over_coils(Index coils, Index n, VecC& out, F&& per_coil) {
  out.setZero(n);
  const int threads = coil_threads(coils);
  if (threads <= 1) {
    for (Index c = 0; c < coils; ++c) per_coil(c, out.data());
    return;
  }
  // Per-thread partial images live in the threads' FFT scratch (slot 2): no allocation per call.
  constexpr int kMaxPartials = 256;
  const int used_threads = std::min(threads, kMaxPartials);
  cfloat* partial[kMaxPartials] = {};
#pragma omp parallel num_threads(used_threads)
  {
    cfloat* acc = internal::fft_scratch(static_cast<size_t>(n), 2);
    std::fill(acc, acc + n, cfloat(0.0f, 0.0f));
    partial[omp_get_thread_num()] = acc;
#pragma omp for schedule(static)
    for (Index c = 0; c < coils; ++c) per_coil(c, acc);
  }
  const int used = used_threads;
#pragma omp parallel for num_threads(used_threads) schedule(static)
  for (Index i = 0; i < n; ++i) {
    cfloat s(0.0f, 0.0f);
    for (int t = 0; t < used; ++t)
      if (partial[t]) s += partial[t][i];
    out[i] = s;
  }
}

}  // namespace

void MaskedFourier::adjoint(const VecC& y, VecC& x) const {
  const Index n = ny_ * nx_;
  RECOFOLD_CHECK(y.size() == coils_ * n) << name() << ": adjoint of " << y.size() << " values";
  accumulate_over_coils(coils_, n, x, [&](Index c, cfloat* acc) { adjoint_coil_accumulate(y.data() + c * n, c, acc); });
}

void MaskedFourier::normal(const VecC& x, VecC& out) const {
  const Index n = ny_ * nx_;
  RECOFOLD_CHECK(x.size() == n) << name() << ": normal of " << x.size() << " values";
  if (&x == &out) {
    const VecC copy = x;
    normal(copy, out);
    return;
  }
  accumulate_over_coils(coils_, n, out, [&](Index c, cfloat* acc) { normal_coil_accumulate(x.data(), c, acc); });
}

std::unique_ptr<MaskedFourier> make_sense_operator(const MriData& mri, const std::string& file) {
  if (mri.kspace.shape.rank() != 3 || mri.kspace.shape[0] < 1 || mri.kspace.shape[1] < 1 ||
      mri.kspace.shape[2] < 1)
    throw InputError(file, "/mri/kspace", "expected shape [coils, ny, nx], got " + mri.kspace.shape.to_string());
  const Index coils = mri.kspace.shape[0], ny = mri.kspace.shape[1], nx = mri.kspace.shape[2];
  if (mri.mask.shape != Shape{ny, nx})
    throw InputError(file, "/mri/mask",
                     "shape " + mri.mask.shape.to_string() + ", k-space is " + mri.kspace.shape.to_string());
  for (uint8_t m : mri.mask.data)
    if (m > 1) throw InputError(file, "/mri/mask", "values must be 0 or 1");
  NdArray<cfloat> maps = mri.coil_maps;
  if (maps.data.empty()) {
    if (coils != 1)
      throw InputError(file, "/mri/coil_maps", "missing, but the k-space has " + std::to_string(coils) + " coils");
  } else if (maps.shape != Shape{coils, ny, nx}) {
    throw InputError(file, "/mri/coil_maps",
                     "shape " + maps.shape.to_string() + ", k-space is " + mri.kspace.shape.to_string());
  }
  return std::make_unique<MaskedFourier>(ny, nx, mri.mask, std::move(maps));
}

VecC kspace_vector(const MriData& mri) {
  return Eigen::Map<const VecC>(mri.kspace.ptr(), mri.kspace.size());
}

}  // namespace recofold
