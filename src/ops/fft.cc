// SPDX-License-Identifier: Apache-2.0
// Centred orthonormal 2-D FFT on cached FFTW single-precision plans.
#include "recofold/ops/fft.h"

#include <fftw3.h>
#include <omp.h>

#include <atomic>
#include <cmath>
#include <cstring>
#include <map>
#include <mutex>
#include <sstream>
#include <tuple>

#include "fft_plan_cache.h"
#include "recofold/core/error.h"

namespace recofold {

namespace {

std::atomic<int> g_threads{0};
std::atomic<bool> g_measure{true};
constexpr double kPlanTimeLimitSeconds = 1.0;

// Plans are made once per (ny, nx, direction, threads) and never destroyed
// (they live as long as the process; a few kB each).
struct PlanCache {
  std::mutex mutex;
  bool threads_ready = false;
  std::map<std::tuple<Index, Index, int, int, bool>, fftwf_plan> plans;
};

PlanCache& cache() {
  static PlanCache* c = new PlanCache();  // intentionally leaked: usable during static destruction
  return *c;
}

struct ScratchSlot {
  cfloat* data = nullptr;
  size_t size = 0;
  ~ScratchSlot() {
    if (data) fftwf_free(data);
  }
};

constexpr int kScratchSlots = 3;

}  // namespace

void set_fft_threads(int threads) { g_threads.store(threads < 0 ? 0 : threads); }

int fft_threads() {
  const int t = g_threads.load();
  if (t > 0) return t;
  const int m = omp_get_max_threads();
  return m > 0 ? m : 1;
}

void set_fft_measure(bool measure) { g_measure.store(measure); }

bool import_fft_wisdom(const std::string& path) {
  std::lock_guard<std::mutex> lock(cache().mutex);
  return fftwf_import_wisdom_from_filename(path.c_str()) != 0;
}

bool export_fft_wisdom(const std::string& path) {
  std::lock_guard<std::mutex> lock(cache().mutex);
  return fftwf_export_wisdom_to_filename(path.c_str()) != 0;
}

namespace internal {

cfloat* fft_scratch(size_t n, int slot) {
  RECOFOLD_CHECK(slot >= 0 && slot < kScratchSlots) << "scratch slot " << slot;
  thread_local ScratchSlot slots[kScratchSlots];
  ScratchSlot& s = slots[slot];
  if (s.size < n) {
    if (s.data) fftwf_free(s.data);
    s.data = reinterpret_cast<cfloat*>(fftwf_malloc(sizeof(cfloat) * n));
    if (!s.data) throw WorkError("out of memory for an FFT buffer of " + std::to_string(n) + " values");
    s.size = n;
  }
  return s.data;
}

namespace {
void execute_inplace(cfloat* buffer, Index ny, Index nx, FftDirection direction, int threads, bool measure) {
  RECOFOLD_CHECK(ny > 0 && nx > 0) << "FFT of size " << ny << "x" << nx;
  if (threads < 1) threads = 1;
  const int sign = direction == FftDirection::kForward ? FFTW_FORWARD : FFTW_BACKWARD;
  const auto key = std::make_tuple(ny, nx, sign, threads, measure);
  fftwf_plan plan = nullptr;
  {
    PlanCache& c = cache();
    std::lock_guard<std::mutex> lock(c.mutex);
    auto it = c.plans.find(key);
    if (it != c.plans.end()) {
      plan = it->second;
    } else {
      if (!c.threads_ready) {
        fftwf_init_threads();
        fftwf_set_timelimit(kPlanTimeLimitSeconds);
        c.threads_ready = true;
      }
      fftwf_plan_with_nthreads(threads);
      // Plan on a private aligned buffer: FFTW_MEASURE overwrites its arrays.
      const size_t n = static_cast<size_t>(ny * nx);
      auto* tmp = reinterpret_cast<fftwf_complex*>(fftwf_malloc(sizeof(fftwf_complex) * n));
      if (!tmp) throw WorkError("out of memory while planning an FFT");
      // Measured plans exclude FFTW's buffered algorithms: those allocate
      // their buffers on every execution (one allocation per column of a
      // 512^2 transform), and iterative solvers run thousands of transforms.
      // Estimated plans stay as they were (their bytes are reproducible).
      plan = fftwf_plan_dft_2d(static_cast<int>(ny), static_cast<int>(nx), tmp, tmp, sign,
                               measure ? (FFTW_MEASURE | FFTW_NO_BUFFERING) : FFTW_ESTIMATE);
      fftwf_free(tmp);
      if (!plan) throw WorkError("FFTW could not plan a " + std::to_string(ny) + "x" + std::to_string(nx) + " FFT");
      c.plans.emplace(key, plan);
    }
  }
  auto* p = reinterpret_cast<fftwf_complex*>(buffer);
  fftwf_execute_dft(plan, p, p);  // new-array execute: thread-safe
}
}  // namespace

void fft_execute_inplace(cfloat* buffer, Index ny, Index nx, FftDirection direction, int threads) {
  execute_inplace(buffer, ny, nx, direction, threads, g_measure.load());
}

void fft_execute_inplace_estimated(cfloat* buffer, Index ny, Index nx, FftDirection direction, int threads) {
  execute_inplace(buffer, ny, nx, direction, threads, false);
}

}  // namespace internal

void fft2c(const cfloat* in, cfloat* out, Index ny, Index nx, FftDirection direction) {
  fft2c(in, out, ny, nx, direction, FftPlanning::kSetting);
}

void fft2c(const cfloat* in, cfloat* out, Index ny, Index nx, FftDirection direction, FftPlanning planning) {
  RECOFOLD_CHECK(ny > 0 && nx > 0) << "fft2c of size " << ny << "x" << nx;
  const size_t n = static_cast<size_t>(ny * nx);
  cfloat* buf = internal::fft_scratch(n, 0);
  internal::for_each_shifted(ny, nx, internal::to_fft_order_shift(ny), internal::to_fft_order_shift(nx),
                             [&](Index d, Index s) { buf[d] = in[s]; });
  // Inside a parallel region (coils or cases side by side) each transform is single-threaded.
  const int threads = omp_in_parallel() ? 1 : fft_threads();
  if (planning == FftPlanning::kEstimate) internal::fft_execute_inplace_estimated(buf, ny, nx, direction, threads);
  else internal::fft_execute_inplace(buf, ny, nx, direction, threads);
  const float scale = static_cast<float>(1.0 / std::sqrt(static_cast<double>(n)));
  internal::for_each_shifted(ny, nx, internal::to_centred_shift(ny), internal::to_centred_shift(nx),
                             [&](Index d, Index s) { out[d] = buf[s] * scale; });
}

ImageC fft2c(const ImageC& image) {
  ImageC out(image.rows(), image.cols());
  fft2c(image.data(), out.data(), image.rows(), image.cols(), FftDirection::kForward);
  return out;
}

ImageC ifft2c(const ImageC& kspace) {
  ImageC out(kspace.rows(), kspace.cols());
  fft2c(kspace.data(), out.data(), kspace.rows(), kspace.cols(), FftDirection::kInverse);
  return out;
}

void fft2c_stack(NdArray<cfloat>& stack, FftDirection direction) {
  RECOFOLD_CHECK(stack.shape.rank() == 3) << "fft2c_stack needs [count, ny, nx], got " << stack.shape.to_string();
  const Index count = stack.shape[0], ny = stack.shape[1], nx = stack.shape[2];
  const int threads = static_cast<int>(std::min<Index>(count, fft_threads()));
#pragma omp parallel for num_threads(threads) schedule(static) if (threads > 1)
  for (Index c = 0; c < count; ++c) {
    cfloat* slice = stack.ptr() + c * ny * nx;
    fft2c(slice, slice, ny, nx, direction);
  }
}

CenteredFft::CenteredFft(Index ny, Index nx) : ny_(ny), nx_(nx) {
  RECOFOLD_CHECK(ny > 0 && nx > 0) << "CenteredFft of size " << ny << "x" << nx;
}

void CenteredFft::apply(const VecC& x, VecC& y) const {
  RECOFOLD_CHECK(x.size() == ny_ * nx_) << name() << ": input has " << x.size() << " values";
  y.resize(ny_ * nx_);
  fft2c(x.data(), y.data(), ny_, nx_, FftDirection::kForward);
}

void CenteredFft::adjoint(const VecC& y, VecC& x) const {
  RECOFOLD_CHECK(y.size() == ny_ * nx_) << name() << ": input has " << y.size() << " values";
  x.resize(ny_ * nx_);
  fft2c(y.data(), x.data(), ny_, nx_, FftDirection::kInverse);
}

std::string CenteredFft::name() const {
  std::ostringstream s;
  s << "centred FFT " << ny_ << "x" << nx_;
  return s.str();
}

}  // namespace recofold
