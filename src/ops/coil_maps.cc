// SPDX-License-Identifier: Apache-2.0
// Synthetic coil sensitivities around the field of view and their low-resolution estimate from calibration data.
#include "recofold/ops/coil_maps.h"

#include <algorithm>
#include <cmath>

#include <Eigen/Dense>

#include "recofold/core/error.h"
#include "recofold/ops/fft.h"

namespace recofold {

namespace {
constexpr double kPi = 3.14159265358979323846;
}

std::vector<std::string> CoilArrayOptions::validate() const {
  std::vector<std::string> e;
  if (coils < 1 || coils > 32) e.push_back("coils = " + std::to_string(coils) + "; must be 1..32");
  if (!(ring_radius > 1.0)) e.push_back("ring_radius = " + std::to_string(ring_radius) + "; must be > 1");
  if (!(falloff > 0.0)) e.push_back("falloff = " + std::to_string(falloff) + "; must be > 0");
  if (!(phase_cycles >= 0.0) || !std::isfinite(phase_cycles))
    e.push_back("phase_cycles = " + std::to_string(phase_cycles) + "; must be >= 0");
  if (!std::isfinite(first_angle_rad)) e.push_back("first_angle_rad must be finite");
  return e;
}

std::vector<cfloat> coil_sensitivities_at(const CoilArrayOptions& o, double x, double y) {
  const int c_count = o.coils;
  std::vector<cfloat> s(static_cast<size_t>(c_count));
  if (c_count == 1) {
    s[0] = cfloat(1.0f, 0.0f);
    return s;
  }
  std::vector<std::complex<double>> raw(static_cast<size_t>(c_count));
  double sos = 0.0;
  for (int c = 0; c < c_count; ++c) {
    const double a = 2.0 * kPi * c / c_count + o.first_angle_rad;
    const double qx = o.ring_radius * std::cos(a), qy = o.ring_radius * std::sin(a);
    const double d2 = (x - qx) * (x - qx) + (y - qy) * (y - qy);
    const double mag = 1.0 / (1.0 + d2 / (o.falloff * o.falloff));
    const double tx = -std::sin(a), ty = std::cos(a);  // unit tangent of the ring at the coil
    const double phase = 2.0 * kPi * c / c_count + 2.0 * kPi * o.phase_cycles * (tx * x + ty * y);
    raw[static_cast<size_t>(c)] = std::polar(mag, phase);
    sos += mag * mag;
  }
  const double inv = 1.0 / std::sqrt(sos);
  for (int c = 0; c < c_count; ++c) {
    const auto v = raw[static_cast<size_t>(c)] * inv;
    s[static_cast<size_t>(c)] = cfloat(static_cast<float>(v.real()), static_cast<float>(v.imag()));
  }
  return s;
}

NdArray<cfloat> synthetic_coil_maps(const CoilArrayOptions& options, Index ny, Index nx) {
  const auto errors = options.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
    throw InputError("", "coils", all);
  }
  RECOFOLD_CHECK(ny > 0 && nx > 0);
  const Index c_count = options.coils;
  NdArray<cfloat> maps(Shape{c_count, ny, nx});
  const Index n = ny * nx;
#pragma omp parallel for schedule(static)
  for (Index iy = 0; iy < ny; ++iy) {
    const double y = 1.0 - (2.0 * static_cast<double>(iy) + 1.0) / static_cast<double>(ny);
    for (Index ix = 0; ix < nx; ++ix) {
      const double x = -1.0 + (2.0 * static_cast<double>(ix) + 1.0) / static_cast<double>(nx);
      const auto s = coil_sensitivities_at(options, x, y);
      for (Index c = 0; c < c_count; ++c) maps.data[static_cast<size_t>(c * n + iy * nx + ix)] = s[static_cast<size_t>(c)];
    }
  }
  return maps;
}

cdouble CoilFourierSeries::value(int coil, double x, double y) const {
  RECOFOLD_CHECK(coil >= 0 && coil < coils) << "coil " << coil << " of " << coils;
  const Index t_count = terms();
  cdouble s(0.0, 0.0);
  for (Index t = 0; t < t_count; ++t)
    s += coeff[static_cast<size_t>(coil * t_count + t)] *
         std::polar(1.0, 2.0 * kPi * (gx[static_cast<size_t>(t)] * x + gy[static_cast<size_t>(t)] * y));
  return s;
}

CoilFourierSeries fit_coil_fourier_series(const CoilArrayOptions& options, int order) {
  const auto errors = options.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
    throw InputError("", "coils", all);
  }
  if (order < 0 || order > 6)
    throw InputError("", "coil_series_order", "= " + std::to_string(order) + "; must be 0..6");
  CoilFourierSeries s;
  s.coils = options.coils;
  if (options.coils == 1) {
    s.order = 0;
    s.gx = {0.0};
    s.gy = {0.0};
    s.coeff = {cdouble(1.0, 0.0)};
    return s;
  }
  s.order = order;
  const int side = 2 * order + 1;
  for (int n = -order; n <= order; ++n)
    for (int m = -order; m <= order; ++m) {
      s.gx.push_back(m / kCoilSeriesPeriod);
      s.gy.push_back(n / kCoilSeriesPeriod);
    }
  const Index t_count = static_cast<Index>(side) * side;
  constexpr int kFit = 48;  // fit raster of the square
  Eigen::MatrixXcd basis(kFit * kFit, t_count);
  Eigen::MatrixXcd target(kFit * kFit, options.coils);
  for (int iy = 0; iy < kFit; ++iy)
    for (int ix = 0; ix < kFit; ++ix) {
      const double x = -1.0 + (2.0 * ix + 1.0) / kFit, y = 1.0 - (2.0 * iy + 1.0) / kFit;
      const Index r = iy * kFit + ix;
      for (Index t = 0; t < t_count; ++t)
        basis(r, t) = std::polar(1.0, 2.0 * kPi * (s.gx[static_cast<size_t>(t)] * x + s.gy[static_cast<size_t>(t)] * y));
      const auto v = coil_sensitivities_at(options, x, y);
      for (int c = 0; c < options.coils; ++c) target(r, c) = cdouble(v[static_cast<size_t>(c)]);
    }
  const Eigen::MatrixXcd a = basis.colPivHouseholderQr().solve(target);
  s.coeff.resize(static_cast<size_t>(options.coils * t_count));
  for (int c = 0; c < options.coils; ++c)
    for (Index t = 0; t < t_count; ++t) s.coeff[static_cast<size_t>(c * t_count + t)] = a(t, c);
  return s;
}

NdArray<cfloat> coil_series_maps(const CoilFourierSeries& s, Index ny, Index nx) {
  RECOFOLD_CHECK(ny > 0 && nx > 0 && s.coils >= 1 && s.terms() >= 1);
  const Index t_count = s.terms(), c_count = s.coils, n = ny * nx;
  NdArray<cfloat> maps(Shape{c_count, ny, nx});
  // The lattice is separable: exp(i2π gx x) per column and exp(i2π gy y) per row.
  const int side = 2 * s.order + 1;
  std::vector<cdouble> ex(static_cast<size_t>(side * nx)), ey(static_cast<size_t>(side * ny));
  for (int m = 0; m < side; ++m) {
    const double g = (m - s.order) / kCoilSeriesPeriod;
    for (Index ix = 0; ix < nx; ++ix) {
      const double x = -1.0 + (2.0 * static_cast<double>(ix) + 1.0) / static_cast<double>(nx);
      ex[static_cast<size_t>(m * nx + ix)] = std::polar(1.0, 2.0 * kPi * g * x);
    }
    for (Index iy = 0; iy < ny; ++iy) {
      const double y = 1.0 - (2.0 * static_cast<double>(iy) + 1.0) / static_cast<double>(ny);
      ey[static_cast<size_t>(m * ny + iy)] = std::polar(1.0, 2.0 * kPi * g * y);
    }
  }
#pragma omp parallel for schedule(static)
  for (Index iy = 0; iy < ny; ++iy) {
    std::vector<cdouble> b(static_cast<size_t>(side));
    for (Index c = 0; c < c_count; ++c) {
      // b_m = Σ_n a_{c,(n,m)} exp(i2π gy_n y)
      for (int m = 0; m < side; ++m) {
        cdouble v(0.0, 0.0);
        for (int nn = 0; nn < side; ++nn)
          v += s.coeff[static_cast<size_t>(c * t_count + nn * side + m)] * ey[static_cast<size_t>(nn * ny + iy)];
        b[static_cast<size_t>(m)] = v;
      }
      cfloat* row = maps.ptr() + c * n + iy * nx;
      for (Index ix = 0; ix < nx; ++ix) {
        cdouble v(0.0, 0.0);
        for (int m = 0; m < side; ++m) v += b[static_cast<size_t>(m)] * ex[static_cast<size_t>(m * nx + ix)];
        row[ix] = cfloat(static_cast<float>(v.real()), static_cast<float>(v.imag()));
      }
    }
  }
  return maps;
}

CalibrationRegion find_calibration_region(const NdArray<uint8_t>& mask) {
  RECOFOLD_CHECK(mask.shape.rank() == 2) << "mask shape " << mask.shape.to_string();
  const Index ny = mask.shape[0], nx = mask.shape[1];
  const Index cy = ny / 2, cx = nx / 2;
  CalibrationRegion best;
  auto at = [&](Index r, Index c) { return mask.data[static_cast<size_t>(r * nx + c)] != 0; };
  if (!at(cy, cx)) return best;
  std::vector<uint8_t> all_rows(static_cast<size_t>(nx), 1);  // columns sampled in every row so far
  Index top = cy, bottom = cy;  // inclusive row range
  bool grow_up = true;
  auto add_row = [&](Index r) {
    for (Index c = 0; c < nx; ++c) all_rows[static_cast<size_t>(c)] &= at(r, c) ? 1 : 0;
  };
  add_row(cy);
  while (true) {
    if (!all_rows[static_cast<size_t>(cx)]) break;
    Index left = cx, right = cx;
    while (left > 0 && all_rows[static_cast<size_t>(left - 1)]) --left;
    while (right + 1 < nx && all_rows[static_cast<size_t>(right + 1)]) ++right;
    const Index rows = bottom - top + 1, cols = right - left + 1;
    if (rows * cols > best.rows * best.cols) best = CalibrationRegion{top, left, rows, cols};
    // Next row: alternate above and below (even-sized centred blocks have the extra row on top).
    bool added = false;
    for (int attempt = 0; attempt < 2 && !added; ++attempt) {
      if (grow_up && top > 0) {
        add_row(--top);
        added = true;
      } else if (!grow_up && bottom + 1 < ny) {
        add_row(++bottom);
        added = true;
      }
      grow_up = !grow_up;
    }
    if (!added) break;
  }
  return best;
}

NdArray<cfloat> estimate_coil_maps(const NdArray<cfloat>& kspace, const NdArray<uint8_t>& mask, double threshold,
                                   const std::string& file) {
  RECOFOLD_CHECK(kspace.shape.rank() == 3) << "k-space shape " << kspace.shape.to_string();
  const Index coils = kspace.shape[0], ny = kspace.shape[1], nx = kspace.shape[2];
  RECOFOLD_CHECK(mask.shape == (Shape{ny, nx})) << "mask " << mask.shape.to_string();
  const CalibrationRegion r = find_calibration_region(mask);
  if (r.rows < 4 || r.cols < 4)
    throw InputError(file, "/mri/mask",
                     "the fully sampled centre is " + std::to_string(r.rows) + "x" + std::to_string(r.cols) +
                         "; estimating coil maps needs at least 4x4 (use a mask with a calibration region)");
  const Index n = ny * nx;
  NdArray<cfloat> images(Shape{coils, ny, nx});
  // Hann taper over the block: w(i) = sin^2(pi (i + 1/2) / len), never zero inside.
  auto hann = [](Index i, Index len) {
    const double s = std::sin(kPi * (static_cast<double>(i) + 0.5) / static_cast<double>(len));
    return s * s;
  };
  for (Index c = 0; c < coils; ++c)
    for (Index i = 0; i < r.rows; ++i)
      for (Index j = 0; j < r.cols; ++j) {
        const Index p = (r.row0 + i) * nx + (r.col0 + j);
        images.data[static_cast<size_t>(c * n + p)] =
            kspace.data[static_cast<size_t>(c * n + p)] * static_cast<float>(hann(i, r.rows) * hann(j, r.cols));
      }
  fft2c_stack(images, FftDirection::kInverse);
  std::vector<double> sos(static_cast<size_t>(n), 0.0);
  double max_sos = 0.0;
  for (Index p = 0; p < n; ++p) {
    double s = 0.0;
    for (Index c = 0; c < coils; ++c) s += std::norm(std::complex<double>(images.data[static_cast<size_t>(c * n + p)]));
    sos[static_cast<size_t>(p)] = std::sqrt(s);
    max_sos = std::max(max_sos, sos[static_cast<size_t>(p)]);
  }
  NdArray<cfloat> maps(Shape{coils, ny, nx});
  const double floor = threshold * max_sos;
  for (Index p = 0; p < n; ++p) {
    const double s = sos[static_cast<size_t>(p)];
    if (!(s > floor) || s <= 0.0) continue;
    for (Index c = 0; c < coils; ++c)
      maps.data[static_cast<size_t>(c * n + p)] = images.data[static_cast<size_t>(c * n + p)] / static_cast<float>(s);
  }
  return maps;
}

}  // namespace recofold
