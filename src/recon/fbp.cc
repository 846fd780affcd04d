// SPDX-License-Identifier: Apache-2.0
// FBP: windowed band-limited ramp (own radix-2 FFT), parallel and fan-beam weighted back-projection.
#include "recofold/recon/fbp.h"

#include <algorithm>
#include <cmath>
#include <complex>

#include "recofold/core/error.h"
#include "recofold/core/measurement.h"

namespace recofold {

namespace {

using cd = std::complex<double>;

// In-place iterative radix-2 FFT of length n (a power of two); the filter
// lengths here are small, so a self-contained transform avoids sharing FFTW
// planner state with the rest of the program.
class Radix2Fft {
 public:
  explicit Radix2Fft(Index n) : n_(n), twiddle_(static_cast<size_t>(n / 2)), rev_(static_cast<size_t>(n)) {
    int bits = 0;
    while ((Index(1) << bits) < n) ++bits;
    for (Index i = 0; i < n; ++i) {
      Index r = 0;
      for (int b = 0; b < bits; ++b)
        if (i & (Index(1) << b)) r |= Index(1) << (bits - 1 - b);
      rev_[static_cast<size_t>(i)] = r;
    }
    for (Index k = 0; k < n / 2; ++k) twiddle_[static_cast<size_t>(k)] = std::polar(1.0, -2.0 * M_PI * k / n);
  }

  // forward: X_k = sum x_n e^{-2 pi i k n / N}; inverse includes 1/N.
  void run(cd* a, bool inverse) const {
    for (Index i = 0; i < n_; ++i) {
      const Index r = rev_[static_cast<size_t>(i)];
      if (i < r) std::swap(a[i], a[r]);
    }
    for (Index len = 2; len <= n_; len <<= 1) {
      const Index half = len / 2, step = n_ / len;
      for (Index s = 0; s < n_; s += len) {
        for (Index k = 0; k < half; ++k) {
          cd w = twiddle_[static_cast<size_t>(k * step)];
          if (inverse) w = std::conj(w);
          const cd u = a[s + k], v = a[s + k + half] * w;
          a[s + k] = u + v;
          a[s + k + half] = u - v;
        }
      }
    }
    if (inverse)
      for (Index i = 0; i < n_; ++i) a[i] /= double(n_);
  }

 private:
  Index n_;
  std::vector<cd> twiddle_;
  std::vector<Index> rev_;
};

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
  return std::nullopt;
}

std::string fbp_filter_names() { return "ram-lak, shepp-logan, cosine, hamming, hann"; }

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
  std::vector<cd> h(static_cast<size_t>(p), cd(0.0));
  h[0] = 0.25;
  for (Index k = 1; k < p; k += 2) {
    const double n = double(std::min(k, p - k));
    h[static_cast<size_t>(k)] = -1.0 / (M_PI * M_PI * n * n);
  }
  Radix2Fft(p).run(h.data(), false);
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
    out[static_cast<size_t>(k)] = 2.0 * h[static_cast<size_t>(k)].real() * w;
  }
  return out;
}

ImageF fbp(const CtGeometry& g, const float* sinogram, const FbpOptions& options) {
  auto errors = g.validate();
  const auto oerr = options.validate();
  errors.insert(errors.end(), oerr.begin(), oerr.end());
  if (!errors.empty()) throw InputError("", "fbp", errors_joined(errors));

  const Index nv = g.view_count(), nd = g.detector_count, ny = g.ny, nx = g.nx;
  const bool fan = g.beam == CtBeam::kFan;
  const bool flat = fan && g.fan_detector == FanDetector::kFlat;
  const double R = g.source_to_isocenter_mm, D = g.source_to_detector_mm;
  const Index p = padded_length(nd, options.padding_factor);
  Radix2Fft fft(p);

  // Spatial kernel hw(n) = windowed Kak & Slaney ramp at unit spacing (the
  // symmetric part of the response, as skimage keeps the real part of its
  // inverse FFT), then geometry-specific sampling and weights.
  const std::vector<double> response = fbp_frequency_response(options.filter, p);
  std::vector<cd> kernel(static_cast<size_t>(p));
  for (Index k = 0; k < p; ++k)
    kernel[static_cast<size_t>(k)] =
        0.25 * (response[static_cast<size_t>(k)] + response[static_cast<size_t>((p - k) % p)]);
  fft.run(kernel.data(), true);            // now hw(n) (the 2 of the response halved)
  double spacing = g.detector_spacing_mm;  // tau, alpha or a
  if (fan) spacing = flat ? g.detector_spacing_mm * R / D : g.detector_spacing_mm / D;
  for (Index k = 0; k < p; ++k) {
    const Index n = k <= p / 2 ? k : k - p;  // signed lag
    double v = kernel[static_cast<size_t>(k)].real() / spacing;
    if (fan) {
      v *= 0.5;
      if (!flat && n != 0) {
        const double gam = double(n) * spacing;
        v *= (gam / std::sin(gam)) * (gam / std::sin(gam));
      }
    }
    // Lags of nd or more never reach an output sample (padding >= 2 nd).
    kernel[static_cast<size_t>(k)] = std::abs(n) < nd ? cd(v, 0.0) : cd(0.0);
  }
  fft.run(kernel.data(), false);
  std::vector<double> response_used(static_cast<size_t>(p));
  for (Index k = 0; k < p; ++k) response_used[static_cast<size_t>(k)] = kernel[static_cast<size_t>(k)].real();

  // Per-detector pre-weights (fan beams).
  std::vector<double> pre(static_cast<size_t>(nd), 1.0);
  if (fan) {
    for (Index j = 0; j < nd; ++j) {
      if (flat) {
        const double s = g.detector_coordinate(j) * R / D;
        pre[static_cast<size_t>(j)] = R / std::sqrt(R * R + s * s);
      } else {
        pre[static_cast<size_t>(j)] = R * std::cos(g.fan_angle(j));
      }
    }
  }

  // Filter two views at once (real and imaginary parts): the response is real
  // and even, so the two never mix. Rows get one trailing zero for interpolation.
  const Index qs = nd + 1;
  std::vector<float> q(static_cast<size_t>(nv * qs), 0.0f);
#pragma omp parallel
  {
    std::vector<cd> buf(static_cast<size_t>(p));
#pragma omp for schedule(dynamic, 1)
    for (Index v = 0; v < nv; v += 2) {
      const bool pair = v + 1 < nv;
      std::fill(buf.begin(), buf.end(), cd(0.0));
      for (Index j = 0; j < nd; ++j) {
        const double a = sinogram[v * nd + j] * pre[static_cast<size_t>(j)];
        const double b = pair ? sinogram[(v + 1) * nd + j] * pre[static_cast<size_t>(j)] : 0.0;
        buf[static_cast<size_t>(j)] = cd(a, b);
      }
      fft.run(buf.data(), false);
      for (Index k = 0; k < p; ++k) buf[static_cast<size_t>(k)] *= response_used[static_cast<size_t>(k)];
      fft.run(buf.data(), true);
      for (Index j = 0; j < nd; ++j) {
        q[static_cast<size_t>(v * qs + j)] = static_cast<float>(buf[static_cast<size_t>(j)].real());
        if (pair) q[static_cast<size_t>((v + 1) * qs + j)] = static_cast<float>(buf[static_cast<size_t>(j)].imag());
      }
    }
  }

  std::vector<double> cs(static_cast<size_t>(nv)), sn(static_cast<size_t>(nv));
  for (Index v = 0; v < nv; ++v) {
    cs[static_cast<size_t>(v)] = std::cos(g.angles_rad[static_cast<size_t>(v)]);
    sn[static_cast<size_t>(v)] = std::sin(g.angles_rad[static_cast<size_t>(v)]);
  }
  const double px = g.pixel_size_mm, cx = 0.5 * double(nx - 1), cy = 0.5 * double(ny - 1);
  const double tau = g.detector_spacing_mm, off = g.detector_offset_mm, mid = 0.5 * double(nd - 1);
  const double weight = (fan ? 2.0 * M_PI : M_PI) / double(nv) / options.attenuation_per_mm;
  const double rc = g.covered_radius_mm();
  const float top = static_cast<float>(nd - 1);
  ImageF out(ny, nx);

#pragma omp parallel
  {
    std::vector<double> acc(static_cast<size_t>(nx));
    std::vector<float> facc(static_cast<size_t>(nx));  // parallel beams: float sums vectorise
#pragma omp for schedule(dynamic, 1)
    for (Index iy = 0; iy < ny; ++iy) {
      std::fill(acc.begin(), acc.end(), 0.0);
      std::fill(facc.begin(), facc.end(), 0.0f);
      const double y = (cy - double(iy)) * px;
      for (Index v = 0; v < nv; ++v) {
        const float* qv = q.data() + v * qs;
        const double c = cs[static_cast<size_t>(v)], s = sn[static_cast<size_t>(v)];
        if (!fan) {
          // u(ix) = u0 + ix du is linear along the row: find the pixels whose
          // u lies in [0, nd - 1] once, then interpolate without branches.
          const float u0 = static_cast<float>(((-cx * px) * c + y * s - off) / tau + mid);
          const float du = static_cast<float>(px * c / tau);
          int lo = 0, hi = static_cast<int>(nx) - 1;
          inside_range(u0, du, top, static_cast<int>(nx), lo, hi);
          float* a = facc.data();
#pragma omp simd
          for (int ix = lo; ix <= hi; ++ix) {
            const float u = u0 + float(ix) * du;
            const int i = static_cast<int>(u);
            const float f = u - float(i);
            a[ix] += qv[i] + f * (qv[i + 1] - qv[i]);
          }
        } else {
          for (Index ix = 0; ix < nx; ++ix) {
            const double x = (double(ix) - cx) * px;
            const double along = R + (-s * x + c * y);  // R + p.d
            const double across = c * x + s * y;        // p.e
            double u, w;
            if (flat) {
              u = (across * D / along - off) / tau + mid;
              const double uu = along / R;
              w = 1.0 / (uu * uu);
            } else {
              u = (std::atan2(across, along) * D - off) / tau + mid;
              w = 1.0 / (along * along + across * across);
            }
            if (u >= 0.0 && u <= double(nd - 1)) {
              const int i = static_cast<int>(u);
              const double f = u - double(i);
              acc[static_cast<size_t>(ix)] += w * (qv[i] + f * (qv[i + 1] - qv[i]));
            }
          }
        }
      }
      for (Index ix = 0; ix < nx; ++ix) {
        double val = (acc[static_cast<size_t>(ix)] + facc[static_cast<size_t>(ix)]) * weight;
        if (options.zero_outside_circle) {
          const double x = (double(ix) - cx) * px;
          if (x * x + y * y > rc * rc * (1.0 + 1e-9)) val = 0.0;
        }
        out(iy, ix) = static_cast<float>(val);
      }
    }
  }
  return out;
}

ImageF fbp(const Measurement& m, FbpOptions options, const std::string& file) {
  const CtGeometry g = ct_geometry_from(m, file);
  options.attenuation_per_mm = m.ct->mu_per_mm;
  if (!(options.attenuation_per_mm > 0.0) || !std::isfinite(options.attenuation_per_mm))
    throw InputError(file, "/ct/mu_per_mm", std::to_string(options.attenuation_per_mm) + "; must be > 0");
  return fbp(g, m.ct->sinogram.ptr(), options);
}

}  // namespace recofold
