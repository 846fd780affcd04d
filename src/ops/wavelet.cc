// SPDX-License-Identifier: Apache-2.0
// Periodised orthogonal 2-D wavelet transform: filters, analysis/synthesis, sub-band map, shifts.
#include "recofold/ops/wavelet.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"

namespace recofold {

std::string_view to_string(WaveletFamily family) {
  switch (family) {
    case WaveletFamily::kDb1: return "db1";
    case WaveletFamily::kDb2: return "db2";
    case WaveletFamily::kDb3: return "db3";
    case WaveletFamily::kDb4: return "db4";
  }
  return "db1";
}

std::optional<WaveletFamily> parse_wavelet(std::string_view text) {
  if (text == "db1" || text == "haar") return WaveletFamily::kDb1;
  if (text == "db2") return WaveletFamily::kDb2;
  if (text == "db3") return WaveletFamily::kDb3;
  if (text == "db4") return WaveletFamily::kDb4;
  return std::nullopt;
}

std::string accepted_wavelets() { return "db1, db2, db3, db4, haar"; }

std::vector<double> wavelet_lowpass(WaveletFamily family) {
  // Reconstruction low-pass filters of Daubechies (1992), Table 6.1. db1 and
  // db2 are the closed forms; the db3/db4 digits were copied from PyWavelets'
  // Wavelet("dbN").rec_lo (they agree with the table to its printed digits).
  // Reversed here into the decomposition order.
  std::vector<double> rec;
  switch (family) {
    case WaveletFamily::kDb1: {
      const double s = 1.0 / std::sqrt(2.0);
      rec = {s, s};
      break;
    }
    case WaveletFamily::kDb2: {
      const double r3 = std::sqrt(3.0), d = 4.0 * std::sqrt(2.0);
      rec = {(1 + r3) / d, (3 + r3) / d, (3 - r3) / d, (1 - r3) / d};
      break;
    }
    case WaveletFamily::kDb3:
      rec = {0.33267055295008263, 0.8068915093110925,  0.45987750211849154,
             -0.13501102001025458, -0.08544127388202666, 0.03522629188570953};
      break;
    case WaveletFamily::kDb4:
      rec = {0.2303778133088965,  0.7148465705529157,   0.6308807679298589,  -0.027983769416859854,
             -0.18703481171909309, 0.030841381835560764, 0.0328830116668852, -0.010597401785069032};
      break;
  }
  return std::vector<double>(rec.rbegin(), rec.rend());
}

namespace {

// Both line routines work on a periodically extended copy of the signal,
// ext[t] = s[(t + off - (L - 1)) mod n], t = 0 .. n + L - 2, so that the
// sample s[(2k + off - j) mod n] of the formula in the header is
// ext[2k + L - 1 - j] and the inner loops need no modulo.

// One analysis level along a strided line of length n (even): writes n/2
// approximation then n/2 detail coefficients into `out` (contiguous).
void analyse_line(const cfloat* in, Index stride, Index n, const std::vector<float>& lo,
                  const std::vector<float>& hi, std::vector<cfloat>& ext, cfloat* out) {
  const Index len = static_cast<Index>(lo.size());
  const Index half = n / 2;
  const Index shift = len / 2 - (len - 1);  // off - (L - 1), in (-L, 0]
  ext.resize(static_cast<size_t>(n + len - 1));
  for (Index t = 0; t < n + len - 1; ++t) {
    Index idx = (t + shift) % n;
    if (idx < 0) idx += n;
    ext[static_cast<size_t>(t)] = in[idx * stride];
  }
  const float* h = lo.data();
  const float* g = hi.data();
  for (Index k = 0; k < half; ++k) {
    const cfloat* e = ext.data() + 2 * k + len - 1;  // e[-j] = sample for tap j
    float ar = 0.f, ai = 0.f, dr = 0.f, di = 0.f;
    for (Index j = 0; j < len; ++j) {
      const float sr = e[-j].real(), si = e[-j].imag();
      ar += h[j] * sr;
      ai += h[j] * si;
      dr += g[j] * sr;
      di += g[j] * si;
    }
    out[k] = cfloat(ar, ai);
    out[half + k] = cfloat(dr, di);
  }
}

// Adjoint (= inverse) of analyse_line: `in` holds n/2 approximation then n/2
// detail coefficients (contiguous); the signal is written to the strided line.
void synthesise_line(const cfloat* in, Index n, const std::vector<float>& lo, const std::vector<float>& hi,
                     cfloat* out, Index stride, std::vector<cfloat>& acc) {
  const Index len = static_cast<Index>(lo.size());
  const Index half = n / 2;
  const Index shift = len / 2 - (len - 1);
  acc.assign(static_cast<size_t>(n + len - 1), cfloat(0.f, 0.f));
  const float* h = lo.data();
  const float* g = hi.data();
  for (Index k = 0; k < half; ++k) {
    const cfloat a = in[k], d = in[half + k];
    cfloat* e = acc.data() + 2 * k + len - 1;
    for (Index j = 0; j < len; ++j) e[-j] += h[j] * a + g[j] * d;
  }
  // Fold the extension back onto the period.
  for (Index i = 0; i < n; ++i) out[i * stride] = cfloat(0.f, 0.f);
  for (Index t = 0; t < n + len - 1; ++t) {
    Index idx = (t + shift) % n;
    if (idx < 0) idx += n;
    out[idx * stride] += acc[static_cast<size_t>(t)];
  }
}

}  // namespace

WaveletTransform::WaveletTransform(Shape shape, WaveletFamily family, int levels)
    : shape_(std::move(shape)), family_(family), levels_(levels) {
  if (shape_.rank() != 2) throw InputError("", "wavelet.shape", "needs a 2-D shape [ny, nx], got " + shape_.to_string());
  if (levels_ < 1 || levels_ > 30)
    throw InputError("", "wavelet.levels", "= " + std::to_string(levels_) + "; must be in [1, 30]");
  const Index m = Index(1) << levels_;
  if (shape_[0] % m != 0 || shape_[1] % m != 0 || shape_[0] < m || shape_[1] < m)
    throw InputError("", "wavelet.levels",
                     std::to_string(levels_) + " levels need ny and nx divisible by " + std::to_string(m) +
                         ", image is " + shape_.to_string());
  const std::vector<double> h = wavelet_lowpass(family_);
  const size_t len = h.size();
  lo_.resize(len);
  hi_.resize(len);
  for (size_t j = 0; j < len; ++j) {
    lo_[j] = static_cast<float>(h[j]);
    const double sign = (j % 2 == 0) ? -1.0 : 1.0;  // (-1)^(j+1)
    hi_[j] = static_cast<float>(sign * h[len - 1 - j]);
  }
}

std::string WaveletTransform::name() const {
  std::ostringstream s;
  s << "wavelet " << to_string(family_) << " " << levels_ << " levels " << shape_[0] << "x" << shape_[1];
  return s.str();
}

void WaveletTransform::apply(const VecC& x, VecC& y) const {
  const Index ny = shape_[0], nx = shape_[1];
  RECOFOLD_CHECK(x.size() == ny * nx) << "wavelet input size " << x.size() << " for shape " << shape_.to_string();
  y = x;
  cfloat* c = y.data();
  for (int l = 0; l < levels_; ++l) {
    const Index h = ny >> l, w = nx >> l;
#pragma omp parallel if (h * w >= 32768)
    {
      std::vector<cfloat> line(static_cast<size_t>(std::max(h, w))), ext;
#pragma omp for schedule(static)
      for (Index r = 0; r < h; ++r) {
        analyse_line(c + r * nx, 1, w, lo_, hi_, ext, line.data());
        std::copy(line.begin(), line.begin() + w, c + r * nx);
      }
#pragma omp for schedule(static)
      for (Index col = 0; col < w; ++col) {
        analyse_line(c + col, nx, h, lo_, hi_, ext, line.data());
        for (Index r = 0; r < h; ++r) c[r * nx + col] = line[static_cast<size_t>(r)];
      }
    }
  }
}

void WaveletTransform::adjoint(const VecC& y, VecC& x) const {
  const Index ny = shape_[0], nx = shape_[1];
  RECOFOLD_CHECK(y.size() == ny * nx) << "wavelet coefficient size " << y.size() << " for shape "
                                      << shape_.to_string();
  x = y;
  cfloat* c = x.data();
  for (int l = levels_ - 1; l >= 0; --l) {
    const Index h = ny >> l, w = nx >> l;
#pragma omp parallel if (h * w >= 32768)
    {
      std::vector<cfloat> line(static_cast<size_t>(std::max(h, w))), acc;
#pragma omp for schedule(static)
      for (Index col = 0; col < w; ++col) {
        for (Index r = 0; r < h; ++r) line[static_cast<size_t>(r)] = c[r * nx + col];
        synthesise_line(line.data(), h, lo_, hi_, c + col, nx, acc);
      }
#pragma omp for schedule(static)
      for (Index r = 0; r < h; ++r) {
        std::copy(c + r * nx, c + r * nx + w, line.begin());
        synthesise_line(line.data(), w, lo_, hi_, c + r * nx, 1, acc);
      }
    }
  }
}

std::vector<SubBand> WaveletTransform::sub_bands() const {
  std::vector<SubBand> bands;
  const Index ny = shape_[0], nx = shape_[1];
  SubBand approx;
  approx.level = levels_;
  approx.orientation = SubBandOrientation::kApproximation;
  approx.rows = ny >> levels_;
  approx.cols = nx >> levels_;
  bands.push_back(approx);
  for (int l = levels_; l >= 1; --l) {
    const Index h = ny >> l, w = nx >> l;
    bands.push_back({l, SubBandOrientation::kLowHigh, 0, w, h, w});
    bands.push_back({l, SubBandOrientation::kHighLow, h, 0, h, w});
    bands.push_back({l, SubBandOrientation::kHighHigh, h, w, h, w});
  }
  return bands;
}

std::vector<int> WaveletTransform::band_index() const {
  const Index nx = shape_[1];
  std::vector<int> idx(static_cast<size_t>(shape_.size()), 0);
  const std::vector<SubBand> bands = sub_bands();
  for (size_t b = 0; b < bands.size(); ++b) {
    const SubBand& s = bands[b];
    for (Index r = s.row0; r < s.row0 + s.rows; ++r)
      for (Index c = s.col0; c < s.col0 + s.cols; ++c) idx[static_cast<size_t>(r * nx + c)] = static_cast<int>(b);
  }
  return idx;
}

void circular_shift(const VecC& in, const Shape& shape, Index dy, Index dx, VecC& out) {
  RECOFOLD_CHECK(shape.rank() == 2 && in.size() == shape.size()) << "circular_shift of size " << in.size()
                                                                  << " with shape " << shape.to_string();
  RECOFOLD_CHECK(&in != &out) << "circular_shift needs distinct input and output";
  const Index ny = shape[0], nx = shape[1];
  out.resize(in.size());
  Index sy = dy % ny;
  if (sy < 0) sy += ny;
  Index sx = dx % nx;
  if (sx < 0) sx += nx;
  for (Index r = 0; r < ny; ++r) {
    const Index ro = (r + sy) % ny;
    for (Index c = 0; c < nx; ++c) out[ro * nx + (c + sx) % nx] = in[r * nx + c];
  }
}

}  // namespace recofold
