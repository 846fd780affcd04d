// SPDX-License-Identifier: Apache-2.0
// Exact Fourier transforms of ellipses and Gaussian blobs, and the Bessel J1 they need.
#include "recofold/phantom/fourier.h"

#include <cmath>

#include "recofold/core/error.h"
#include "phantom_geometry.h"

namespace recofold {

namespace {
constexpr double kPi = 3.14159265358979323846;
constexpr double kSeriesLimit = 12.0;  // power series below, asymptotic expansion above

// 1/(k (k+1)) for the power series and (4 - (2k-1)^2)/(8k) for the
// asymptotic series, tabulated once (divisions dominate otherwise).
struct BesselTables {
  double series[64];
  double asym[64];
  BesselTables() {
    for (int k = 0; k < 64; ++k) {
      series[k] = k == 0 ? 0.0 : 1.0 / (static_cast<double>(k) * (k + 1));
      const double odd = 2.0 * k - 1.0;
      asym[k] = k == 0 ? 0.0 : (4.0 - odd * odd) / (8.0 * k);
    }
  }
};
const BesselTables kTables;

// J1(x)/x by its power series sum_k (-1)^k (x/2)^(2k) / (2 k! (k+1)!), for
// 0 <= x < kSeriesLimit (largest term ~4e3 at x = 12: ~1e-12 absolute error).
double j1_over_x_series(double x) {
  const double q = 0.25 * x * x;
  double term = 0.5;  // k = 0
  double sum = term;
  for (int k = 1; k < 60; ++k) {
    term *= -q * kTables.series[k];
    sum += term;
    if (std::abs(term) < 1e-18) break;  // values are O(1/2): absolute is enough
  }
  return sum;
}

// Hankel's asymptotic expansion (Abramowitz & Stegun 9.2.5 and 9.2.9-10, from
// memory): J1(x) = sqrt(2/(pi x)) (P cos chi - Q sin chi), chi = x - 3 pi/4,
// with terms t_k = prod_{j<=k} (4 - (2j-1)^2) / (j 8 x); P = t0 - t2 + t4 ...,
// Q = t1 - t3 + .... Summed until the terms stop shrinking (error ~e^{-2x}).
double j1_asymptotic(double x) {
  const double inv = 1.0 / x;
  double p = 1.0, q = 0.0;
  double term = 1.0, prev = 1.0;
  for (int k = 1; k < 60; ++k) {
    term *= kTables.asym[k] * inv;
    if (std::abs(term) > std::abs(prev)) break;  // divergent tail of the asymptotic series
    switch (k % 4) {
      case 1: q += term; break;
      case 2: p -= term; break;
      case 3: q -= term; break;
      default: p += term; break;
    }
    if (std::abs(term) < 1e-17) break;
    prev = term;
  }
  const double chi = x - 0.75 * kPi;
  return std::sqrt(2.0 * inv / kPi) * (p * std::cos(chi) - q * std::sin(chi));
}

// exp(-i 2 pi (kx x0 + ky y0)) as (re, im).
inline void shift_phase(double kx, double ky, double x0, double y0, double* re, double* im) {
  const double arg = -2.0 * kPi * (kx * x0 + ky * y0);
  *re = std::cos(arg);
  *im = std::sin(arg);
}

// Real amplitude of a centred component (before intensity and shift).
inline double centred_amplitude(const internal::ComponentFrame& f, double kx, double ky) {
  const double kxp = f.cos_phi * kx + f.sin_phi * ky;  // k' = R(-phi) k
  const double kyp = -f.sin_phi * kx + f.cos_phi * ky;
  const double ua = f.a * kxp, ub = f.b * kyp;
  if (f.kind == ComponentKind::kEllipse) {
    const double kappa = std::sqrt(ua * ua + ub * ub);
    return 2.0 * kPi * f.a * f.b * bessel_j1_over_x(2.0 * kPi * kappa);
  }
  return 2.0 * kPi * f.a * f.b * std::exp(-2.0 * kPi * kPi * (ua * ua + ub * ub));
}

// Sum over components at one point, no global phase.
inline void sum_components(const std::vector<internal::ComponentFrame>& frames, double kx, double ky,
                           double* re, double* im) {
  double sr = 0.0, si = 0.0;
  for (const internal::ComponentFrame& f : frames) {
    const double amp = centred_amplitude(f, kx, ky);
    double pr, pi;
    shift_phase(kx, ky, f.x0, f.y0, &pr, &pi);
    const double vr = amp * pr, vi = amp * pi;
    sr += f.rho_re * vr - f.rho_im * vi;
    si += f.rho_re * vi + f.rho_im * vr;
  }
  *re = sr;
  *im = si;
}
}  // namespace

double bessel_j1_over_x(double x) {
  x = std::abs(x);  // J1(x)/x is even
  if (x < kSeriesLimit) return j1_over_x_series(x);
  return j1_asymptotic(x) / x;
}

double bessel_j1(double x) {
  if (x < 0.0) return -bessel_j1(-x);
  if (x < kSeriesLimit) return x * j1_over_x_series(x);
  return j1_asymptotic(x);
}

cdouble component_fourier(const Component& c, double kx, double ky) {
  const internal::ComponentFrame f = internal::make_frame(c);
  double re, im;
  sum_components({f}, kx, ky, &re, &im);
  return {re, im};
}

cdouble fourier_transform(const Phantom& p, double kx, double ky) {
  const std::vector<internal::ComponentFrame> frames = internal::make_frames(p);
  double re, im;
  sum_components(frames, kx - p.phase_gx, ky - p.phase_gy, &re, &im);
  return cdouble(re, im) * std::polar(1.0, p.phase0_rad);
}

Eigen::VectorXcd fourier_transform(const Phantom& p, const VecD& kx, const VecD& ky) {
  RECOFOLD_CHECK(kx.size() == ky.size()) << "kx has " << kx.size() << " points, ky " << ky.size();
  const std::vector<internal::ComponentFrame> frames = internal::make_frames(p);
  const cdouble global = std::polar(1.0, p.phase0_rad);
  const Index n = kx.size();
  Eigen::VectorXcd out(n);
#pragma omp parallel for schedule(static)
  for (Index i = 0; i < n; ++i) {
    double re, im;
    sum_components(frames, kx[i] - p.phase_gx, ky[i] - p.phase_gy, &re, &im);
    out[i] = cdouble(re, im) * global;
  }
  return out;
}

Eigen::MatrixXcd shifted_fourier_transforms(const Phantom& p, const VecD& kx, const VecD& ky, const VecD& gx,
                                            const VecD& gy) {
  RECOFOLD_CHECK(kx.size() == ky.size()) << "kx has " << kx.size() << " points, ky " << ky.size();
  RECOFOLD_CHECK(gx.size() == gy.size()) << "gx has " << gx.size() << " shifts, gy " << gy.size();
  const std::vector<internal::ComponentFrame> frames = internal::make_frames(p);
  const cdouble global = std::polar(1.0, p.phase0_rad);
  const Index m = kx.size(), t_count = gx.size();
  Eigen::MatrixXcd out(t_count, m);
#pragma omp parallel for schedule(static)
  for (Index j = 0; j < m; ++j)
    for (Index t = 0; t < t_count; ++t) {
      double re, im;
      sum_components(frames, kx[j] - gx[t] - p.phase_gx, ky[j] - gy[t] - p.phase_gy, &re, &im);
      out(t, j) = cdouble(re, im) * global;
    }
  return out;
}

ImageC kspace_on_grid(const Phantom& p, int ny, int nx) {
  RECOFOLD_CHECK(ny >= 1 && nx >= 1) << "grid " << ny << " x " << nx;
  const std::vector<internal::ComponentFrame> frames = internal::make_frames(p);
  const size_t nc = frames.size();
  const double cx = (2.0 * (nx / 2) + 1.0 - nx) / 2.0;
  const double cy = (2.0 * (ny / 2) + 1.0 - ny) / 2.0;
  const double scale = std::sqrt(static_cast<double>(ny) * static_cast<double>(nx)) / 4.0;

  // The shift phase factorises: exp(-i2pi kx x0) for every column and
  // component, exp(-i2pi ky y0) per row inside the loop. The global linear
  // phase moves the frequencies by (gx, gy).
  std::vector<double> col_re(static_cast<size_t>(nx) * nc), col_im(col_re.size());
  for (int v = 0; v < nx; ++v) {
    const double kx = grid_frequency(v, nx) - p.phase_gx;
    for (size_t c = 0; c < nc; ++c) {
      const double arg = -2.0 * kPi * kx * frames[c].x0;
      col_re[static_cast<size_t>(v) * nc + c] = std::cos(arg);
      col_im[static_cast<size_t>(v) * nc + c] = std::sin(arg);
    }
  }
  // A real object has F(-k) = conj(F(k)), and the grid phase factor flips
  // sign with (m, n) too, so element (-n, -m) is the conjugate of (n, m):
  // rows with n < 0 copy their mirror when it lies on the grid.
  const bool hermitian = !p.is_complex();
  const int first_row = ny / 2;  // n = 0
  ImageC out(ny, nx);
  auto compute_row = [&](int u, std::vector<double>& row_re, std::vector<double>& row_im) {
    const int n = u - ny / 2;
    const double ky = -n / 2.0 - p.phase_gy;
    for (size_t c = 0; c < nc; ++c) {
      const double arg = -2.0 * kPi * ky * frames[c].y0;
      row_re[c] = std::cos(arg);
      row_im[c] = std::sin(arg);
    }
    for (int v = 0; v < nx; ++v) {
      const int m = v - nx / 2;
      if (hermitian && n < 0) {
        const int mu = ny / 2 - n, mv = nx / 2 - m;  // indices of (-n, -m)
        if (mu < ny && mv >= 0 && mv < nx) continue;  // filled by mirroring below
      }
      const double kx = m / 2.0 - p.phase_gx;
      double sr = 0.0, si = 0.0;
      for (size_t c = 0; c < nc; ++c) {
        const internal::ComponentFrame& f = frames[c];
        const double amp = centred_amplitude(f, kx, ky);
        const size_t j = static_cast<size_t>(v) * nc + c;
        const double pr = col_re[j] * row_re[c] - col_im[j] * row_im[c];
        const double pi = col_re[j] * row_im[c] + col_im[j] * row_re[c];
        const double vr = amp * pr, vi = amp * pi;
        sr += f.rho_re * vr - f.rho_im * vi;
        si += f.rho_re * vi + f.rho_im * vr;
      }
      const cdouble value = cdouble(sr, si) * std::polar(scale, p.phase0_rad + 2.0 * kPi * (cx * m / nx + cy * n / ny));
      out(u, v) = cfloat(static_cast<float>(value.real()), static_cast<float>(value.imag()));
    }
  };
#pragma omp parallel
  {
    std::vector<double> row_re(nc), row_im(nc);
    // Rows n >= 0 first (every row when the object is complex) ...
#pragma omp for schedule(static)
    for (int u = 0; u < ny; ++u)
      if (!hermitian || u >= first_row) compute_row(u, row_re, row_im);
    // ... then rows n < 0: direct values where no mirror exists, copies elsewhere.
#pragma omp for schedule(static)
    for (int u = 0; u < first_row; ++u) {
      if (!hermitian) continue;
      compute_row(u, row_re, row_im);
      const int n = u - ny / 2;
      for (int v = 0; v < nx; ++v) {
        const int m = v - nx / 2;
        const int mu = ny / 2 - n, mv = nx / 2 - m;
        if (mu < ny && mv >= 0 && mv < nx) out(u, v) = std::conj(out(mu, mv));
      }
    }
  }
  return out;
}

}  // namespace recofold
