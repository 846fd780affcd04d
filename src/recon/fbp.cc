// SPDX-License-Identifier: Apache-2.0
// FBP: windowed band-limited ramp (ops FFT), parallel and fan-beam weighted back-projection.
#include "recofold/recon/fbp.h"

#include <algorithm>
#include <cmath>
#include <exception>

#include "recofold/core/error.h"
#include "recofold/core/measurement.h"
#include "recofold/ops/fft.h"

namespace recofold {

namespace {

// The views are filtered with one row of the ops FFT (fft.h: centred,
// orthonormal, plans cached per (size, direction, threads), so fbp plans at
// most once per direction for its padded length and every view reuses the
// plan; thread-safe, single-threaded inside a parallel region).
// Estimated plans: FBP gives the same bytes in any process (a study and `recofold recon`).
void fft_row(cfloat* row, Index p, FftDirection direction) {
  fft2c(row, row, 1, p, direction, FftPlanning::kEstimate);
}

// DFT of a real even sequence of even length p, in double precision:
//   X_k = sum over lags n in (-p/2, p/2] of x(|n|) cos(2 pi k n / p),  k = 0 .. out_count - 1,
// with x(n) = half[n] for n < half.size() (<= p/2 + 1) and 0 beyond. The
// filter design uses this rather than the single-precision ops FFT: the ramp's
// response near zero frequency is a small difference of large terms, and in
// single precision its relative error (~1e-5) would scale the whole image.
// Cost half.size() x out_count, once per call of fbp (O(p nd), well below
// the back-projection's O(nx ny views)).
std::vector<double> even_dft(const std::vector<double>& half, Index p, Index out_count) {
  const Index m = static_cast<Index>(half.size());
  RECOFOLD_CHECK(p >= 2 && p % 2 == 0 && m >= 1 && m <= p / 2 + 1)
      << "even DFT of length " << p << " with " << m << " lags";
  std::vector<double> table(static_cast<size_t>(p));
  for (Index i = 0; i < p; ++i) table[static_cast<size_t>(i)] = std::cos(2.0 * M_PI * double(i) / double(p));
  std::vector<double> out(static_cast<size_t>(out_count));
#pragma omp parallel for schedule(static) if (m * out_count > (Index(1) << 16))
  for (Index k = 0; k < out_count; ++k) {
    const Index step = k % p;
    double sum = half[0];
    Index index = 0;  // k n mod p
    for (Index n = 1; n < m; ++n) {
      index += step;
      if (index >= p) index -= p;
      sum += (2 * n == p ? 1.0 : 2.0) * half[static_cast<size_t>(n)] * table[static_cast<size_t>(index)];
    }
    out[static_cast<size_t>(k)] = sum;
  }
  return out;
}

// Pixels [lo, hi] of a row whose positions u0 + ix du lie in [0, top]
// (monotone in ix; estimate, then settle with the exact float expression).
// Empty when lo > hi.
void inside_range(float u0, float du, float top, int count, int& lo, int& hi) {
  auto in = [&](int ix) {
    const float u = u0 + float(ix) * du;
    return u >= 0.0f && u <= top;
  };
  if (du == 0.0f) {
    lo = in(0) ? 0 : count;
    hi = count - 1;
    return;
  }
  const double a = (0.0 - u0) / du, b = (double(top) - u0) / du;
  lo = static_cast<int>(std::clamp(std::floor(std::min(a, b)), 0.0, double(count - 1)));
  hi = static_cast<int>(std::clamp(std::ceil(std::max(a, b)), 0.0, double(count - 1)));
  while (lo > 0 && in(lo - 1)) --lo;
  while (lo <= hi && !in(lo)) ++lo;
  while (hi < count - 1 && in(hi + 1)) ++hi;
  while (hi >= lo && !in(hi)) --hi;
}

// Next power of two >= factor x detectors and >= 64. Kept a power of two
// (the ops FFT takes any size): the windows are defined on the padded length,
// so another length would change the windowed results and their agreement
// with scikit-image (fbp.h).
Index padded_length(Index detectors, int factor) {
  Index p = 64;
  while (p < factor * detectors) p <<= 1;
  return p;
}

std::string errors_joined(const std::vector<std::string>& errors) {
  std::string all;
  for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
  return all;
}

void check_inputs(const CtGeometry& g, const FbpOptions& options) {
  auto errors = g.validate();
  const auto oerr = options.validate();
  errors.insert(errors.end(), oerr.begin(), oerr.end());
  if (!errors.empty()) throw InputError("", "fbp", errors_joined(errors));
}

// Step 1, filter design. Spatial kernel at the geometry's sampling for lags
// n = 0 .. nd - 1 (it is even): hw(n) = windowed Kak & Slaney ramp at unit
// spacing (the symmetric part of the response, as skimage keeps the real part
// of its inverse FFT; the 2 of the response halved), divided by the sample
// spacing, with the fan-beam factors. Lags of nd or more never reach an
// output sample (padding >= 2 nd), so they are left out (zero).
std::vector<double> spatial_kernel(const CtGeometry& g, FbpFilter filter, Index p) {
  const bool fan = g.beam == CtBeam::kFan;
  const bool flat = fan && g.fan_detector == FanDetector::kFlat;
  const Index nd = g.detector_count;
  const std::vector<double> response = fbp_frequency_response(filter, p);
  std::vector<double> even(static_cast<size_t>(p / 2 + 1));
  for (Index k = 0; k <= p / 2; ++k)
    even[static_cast<size_t>(k)] =
        0.25 * (response[static_cast<size_t>(k)] + response[static_cast<size_t>((p - k) % p)]);
  std::vector<double> kernel = even_dft(even, p, nd);  // p x the inverse DFT
  const double R = g.source_to_isocenter_mm, D = g.source_to_detector_mm;
  double spacing = g.detector_spacing_mm;  // tau, alpha or a
  if (fan) spacing = flat ? g.detector_spacing_mm * R / D : g.detector_spacing_mm / D;
  for (Index n = 0; n < nd; ++n) {
    double v = kernel[static_cast<size_t>(n)] / double(p) / spacing;
    if (fan) {
      v *= 0.5;
      if (!flat && n != 0) {
        const double gam = double(n) * spacing;
        v *= (gam / std::sin(gam)) * (gam / std::sin(gam));
      }
    }
    kernel[static_cast<size_t>(n)] = v;
  }
  return kernel;
}

// The response the views are multiplied by: DFT of the spatial kernel, in
// the centred order the ops FFT returns (index k holds frequency k - p/2;
// the response is even, so that is the value at |k - p/2|).
std::vector<float> applied_response_centred(const CtGeometry& g, FbpFilter filter, Index p) {
  const std::vector<double> r = even_dft(spatial_kernel(g, filter, p), p, p / 2 + 1);
  std::vector<float> centred(static_cast<size_t>(p));
  for (Index k = 0; k < p; ++k)
    centred[static_cast<size_t>(k)] = static_cast<float>(r[static_cast<size_t>(std::abs(k - p / 2))]);
  return centred;
}

// Per-detector pre-weights: 1 for parallel beams, R / sqrt(R^2 + s^2) (flat)
// or R cos gamma (equiangular) for fan beams.
std::vector<double> detector_preweights(const CtGeometry& g) {
  const Index nd = g.detector_count;
  std::vector<double> pre(static_cast<size_t>(nd), 1.0);
  if (g.beam != CtBeam::kFan) return pre;
  const double R = g.source_to_isocenter_mm, D = g.source_to_detector_mm;
  for (Index j = 0; j < nd; ++j) {
    if (g.fan_detector == FanDetector::kFlat) {
      const double s = g.detector_coordinate(j) * R / D;
      pre[static_cast<size_t>(j)] = R / std::sqrt(R * R + s * s);
    } else {
      pre[static_cast<size_t>(j)] = R * std::cos(g.fan_angle(j));
    }
  }
  return pre;
}

// Step 2, per-view filtering: the weighted views convolved with the kernel,
// one row of nd + 1 values per view (a trailing zero for interpolation).
// Two views share one complex transform (real and imaginary parts): the
// kernel is real and even, so the two never mix. The ops FFT's spectrum is in
// centred order; multiplying by the response in that order and transforming
// back is the same circular convolution (the centring shifts commute with
// it), so the views go in and come out unshifted.
std::vector<float> filter_views(const CtGeometry& g, const float* sinogram, const std::vector<double>& pre,
                                const std::vector<float>& response, Index p) {
  const Index nv = g.view_count(), nd = g.detector_count, qs = nd + 1;
  std::vector<float> q(static_cast<size_t>(nv * qs), 0.0f);
  std::exception_ptr error;
#pragma omp parallel
  {
    std::vector<cfloat> buf(static_cast<size_t>(p));
#pragma omp for schedule(dynamic, 1)
    for (Index v = 0; v < nv; v += 2) {
      try {
        const bool pair = v + 1 < nv;
        std::fill(buf.begin(), buf.end(), cfloat(0.0f, 0.0f));
        for (Index j = 0; j < nd; ++j) {
          const double a = sinogram[v * nd + j] * pre[static_cast<size_t>(j)];
          const double b = pair ? sinogram[(v + 1) * nd + j] * pre[static_cast<size_t>(j)] : 0.0;
          buf[static_cast<size_t>(j)] = cfloat(static_cast<float>(a), static_cast<float>(b));
        }
        fft_row(buf.data(), p, FftDirection::kForward);
        for (Index k = 0; k < p; ++k) buf[static_cast<size_t>(k)] *= response[static_cast<size_t>(k)];
        fft_row(buf.data(), p, FftDirection::kInverse);
        for (Index j = 0; j < nd; ++j) {
          q[static_cast<size_t>(v * qs + j)] = buf[static_cast<size_t>(j)].real();
          if (pair) q[static_cast<size_t>((v + 1) * qs + j)] = buf[static_cast<size_t>(j)].imag();
        }
      } catch (...) {  // e.g. FFTW cannot plan; exceptions must not leave the parallel region
#pragma omp critical(recofold_fbp_filter_error)
        if (!error) error = std::current_exception();
      }
    }
  }
  if (error) std::rethrow_exception(error);
  return q;
}

// Step 3, back-projection. Constants shared by every image row.
struct BackProjection {
  BackProjection(const CtGeometry& geometry, const std::vector<float>& filtered);

  const CtGeometry& g;
  const std::vector<float>& q;  // filtered views, rows of qs = nd + 1
  Index qs;
  bool fan, flat;
  std::vector<double> cs, sn;  // cos and sin of each view angle
  double R, D, px, cx, cy, tau, off, mid;
};

BackProjection::BackProjection(const CtGeometry& geometry, const std::vector<float>& filtered)
    : g(geometry),
      q(filtered),
      qs(geometry.detector_count + 1),
      fan(geometry.beam == CtBeam::kFan),
      flat(fan && geometry.fan_detector == FanDetector::kFlat),
      cs(geometry.angles_rad.size()),
      sn(geometry.angles_rad.size()),
      R(geometry.source_to_isocenter_mm),
      D(geometry.source_to_detector_mm),
      px(geometry.pixel_size_mm),
      cx(0.5 * double(geometry.nx - 1)),
      cy(0.5 * double(geometry.ny - 1)),
      tau(geometry.detector_spacing_mm),
      off(geometry.detector_offset_mm),
      mid(0.5 * double(geometry.detector_count - 1)) {
  for (size_t v = 0; v < cs.size(); ++v) {
    cs[v] = std::cos(g.angles_rad[v]);
    sn[v] = std::sin(g.angles_rad[v]);
  }
}

// Parallel beam, one view into one row at height y. u(ix) = u0 + ix du is
// linear along the row: find the pixels whose u lies in [0, nd - 1] once,
// then interpolate without branches (float sums vectorise).
void add_parallel_view(const BackProjection& b, const float* qv, double c, double s, double y, float* acc) {
  const float top = static_cast<float>(b.g.detector_count - 1);
  const int nx = static_cast<int>(b.g.nx);
  const float u0 = static_cast<float>(((-b.cx * b.px) * c + y * s - b.off) / b.tau + b.mid);
  const float du = static_cast<float>(b.px * c / b.tau);
  int lo = 0, hi = nx - 1;
  inside_range(u0, du, top, nx, lo, hi);
#pragma omp simd
  for (int ix = lo; ix <= hi; ++ix) {
    const float u = u0 + float(ix) * du;
    const int i = static_cast<int>(u);
    const float f = u - float(i);
    acc[ix] += qv[i] + f * (qv[i + 1] - qv[i]);
  }
}

// Fan beam, one view into one row at height y, with the distance weight
// 1/U^2 (flat) or 1/L^2 (equiangular).
void add_fan_view(const BackProjection& b, const float* qv, double c, double s, double y, double* acc) {
  const Index nd = b.g.detector_count;
  for (Index ix = 0; ix < b.g.nx; ++ix) {
    const double x = (double(ix) - b.cx) * b.px;
    const double along = b.R + (-s * x + c * y);  // R + p.d
    const double across = c * x + s * y;          // p.e
    double u, w;
    if (b.flat) {
      u = (across * b.D / along - b.off) / b.tau + b.mid;
      const double uu = along / b.R;
      w = 1.0 / (uu * uu);
    } else {
      u = (std::atan2(across, along) * b.D - b.off) / b.tau + b.mid;
      w = 1.0 / (along * along + across * across);
    }
    if (u >= 0.0 && u <= double(nd - 1)) {
      const int i = static_cast<int>(u);
      const double f = u - double(i);
      acc[ix] += w * (qv[i] + f * (qv[i + 1] - qv[i]));
    }
  }
}

// Every view into the image, rows in parallel, scaled by delta theta (pi / N
// or 2 pi / N) over the attenuation, optionally zero outside the covered circle.
ImageF back_project(const CtGeometry& g, const std::vector<float>& q, const FbpOptions& options) {
  const BackProjection b(g, q);
  const Index nv = g.view_count(), ny = g.ny, nx = g.nx;
  const double weight = (b.fan ? 2.0 * M_PI : M_PI) / double(nv) / options.attenuation_per_mm;
  const double rc = g.covered_radius_mm();
  ImageF out(ny, nx);
#pragma omp parallel
  {
    std::vector<double> acc(static_cast<size_t>(nx));
    std::vector<float> facc(static_cast<size_t>(nx));  // parallel beams
#pragma omp for schedule(dynamic, 1)
    for (Index iy = 0; iy < ny; ++iy) {
      std::fill(acc.begin(), acc.end(), 0.0);
      std::fill(facc.begin(), facc.end(), 0.0f);
      const double y = (b.cy - double(iy)) * b.px;
      for (Index v = 0; v < nv; ++v) {
        const float* qv = q.data() + v * b.qs;
        const double c = b.cs[static_cast<size_t>(v)], s = b.sn[static_cast<size_t>(v)];
        if (b.fan)
          add_fan_view(b, qv, c, s, y, acc.data());
        else
          add_parallel_view(b, qv, c, s, y, facc.data());
      }
      for (Index ix = 0; ix < nx; ++ix) {
        double val = (acc[static_cast<size_t>(ix)] + facc[static_cast<size_t>(ix)]) * weight;
        if (options.zero_outside_circle) {
          const double x = (double(ix) - b.cx) * b.px;
          if (x * x + y * y > rc * rc * (1.0 + 1e-9)) val = 0.0;
        }
        out(iy, ix) = static_cast<float>(val);
      }
    }
  }
  return out;
}

}  // namespace

std::string_view to_string(FbpFilter filter) {
  switch (filter) {
    case FbpFilter::kRamLak:
      return "ram-lak";
    case FbpFilter::kSheppLogan:
      return "shepp-logan";
    case FbpFilter::kCosine:
      return "cosine";
    case FbpFilter::kHamming:
      return "hamming";
    case FbpFilter::kHann:
      return "hann";
  }
  return "ram-lak";
}

std::optional<FbpFilter> parse_fbp_filter(std::string_view text) {
  for (FbpFilter f :
       {FbpFilter::kRamLak, FbpFilter::kSheppLogan, FbpFilter::kCosine, FbpFilter::kHamming, FbpFilter::kHann})
    if (text == to_string(f)) return f;
  if (text == "ramp") return FbpFilter::kRamLak;  // the common name of the unwindowed ramp
  return std::nullopt;
}

std::string fbp_filter_names() { return "ram-lak (or ramp), shepp-logan, cosine, hamming, hann"; }

std::vector<std::string> FbpOptions::validate() const {
  std::vector<std::string> errors;
  if (padding_factor < 2 || padding_factor > 16)
    errors.push_back("fbp.padding_factor = " + std::to_string(padding_factor) + "; must be in [2, 16]");
  if (!(attenuation_per_mm > 0.0) || !std::isfinite(attenuation_per_mm))
    errors.push_back("fbp.attenuation_per_mm = " + std::to_string(attenuation_per_mm) + "; must be > 0");
  return errors;
}

std::vector<double> fbp_frequency_response(FbpFilter filter, Index p) {
  RECOFOLD_CHECK(p >= 2 && (p & (p - 1)) == 0) << "padded length " << p << " is not a power of two";
  std::vector<double> h(static_cast<size_t>(p / 2 + 1), 0.0);  // lags 0 .. p/2 (h is even)
  h[0] = 0.25;
  for (Index n = 1; n <= p / 2; n += 2) h[static_cast<size_t>(n)] = -1.0 / (M_PI * M_PI * double(n) * double(n));
  const std::vector<double> dft = even_dft(h, p, p / 2 + 1);  // real, and even in k
  std::vector<double> out(static_cast<size_t>(p));
  for (Index k = 0; k < p; ++k) {
    double w = 1.0;
    const double f = (k < p / 2 ? double(k) : double(k - p)) / double(p);
    const double shifted = double((k + p / 2) % p);
    switch (filter) {
      case FbpFilter::kRamLak:
        break;
      case FbpFilter::kSheppLogan:
        w = k == 0 ? 1.0 : std::sin(M_PI * f) / (M_PI * f);
        break;
      case FbpFilter::kCosine:
        w = std::sin(M_PI * shifted / double(p));
        break;
      case FbpFilter::kHamming:
        w = 0.54 - 0.46 * std::cos(2.0 * M_PI * shifted / double(p - 1));
        break;
      case FbpFilter::kHann:
        w = 0.5 - 0.5 * std::cos(2.0 * M_PI * shifted / double(p - 1));
        break;
    }
    out[static_cast<size_t>(k)] = 2.0 * dft[static_cast<size_t>(std::min(k, p - k))] * w;
  }
  return out;
}

ImageF fbp(const CtGeometry& g, const float* sinogram, const FbpOptions& options) {
  check_inputs(g, options);
  const Index p = padded_length(g.detector_count, options.padding_factor);
  const std::vector<float> response = applied_response_centred(g, options.filter, p);
  const std::vector<float> q = filter_views(g, sinogram, detector_preweights(g), response, p);
  return back_project(g, q, options);
}

ImageF fbp(const Measurement& m, FbpOptions options, const std::string& file) {
  const CtGeometry g = ct_geometry_from(m, file);
  options.attenuation_per_mm = m.ct->mu_per_mm;
  if (!(options.attenuation_per_mm > 0.0) || !std::isfinite(options.attenuation_per_mm))
    throw InputError(file, "/ct/mu_per_mm", std::to_string(options.attenuation_per_mm) + "; must be > 0");
  return fbp(g, m.ct->sinogram.ptr(), options);
}

}  // namespace recofold
