// SPDX-License-Identifier: Apache-2.0
// Non-uniform FFT plans (binned points, tiled race-free spreading), Toeplitz normal operator, SENSE-NUFFT.
#include "recofold/ops/nufft.h"

#include <fftw3.h>
#include <omp.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <numeric>
#include <sstream>

#include "fft_plan_cache.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/ops/fft.h"

namespace recofold {

namespace {

constexpr double kPi = 3.14159265358979323846;
constexpr int kMinWidth = 2, kMaxWidth = 16;
constexpr Index kTileCells = 32;  // target tile side in grid cells

// Per-thread aligned buffers for the oversampled grids (FFTW's SIMD code
// wants fftwf_malloc alignment). Slots are independent of fft.cc's scratch.
struct GridSlot {
  cfloat* data = nullptr;
  size_t size = 0;
  ~GridSlot() {
    if (data) fftwf_free(data);
  }
};

cfloat* grid_buffer(size_t n, int slot) {
  thread_local GridSlot slots[2];
  GridSlot& s = slots[slot];
  if (s.size < n) {
    if (s.data) fftwf_free(s.data);
    s.data = reinterpret_cast<cfloat*>(fftwf_malloc(sizeof(cfloat) * n));
    if (!s.data) throw WorkError("out of memory for a NUFFT grid of " + std::to_string(n) + " values");
    s.size = n;
  }
  return s.data;
}

int threads_here() { return omp_in_parallel() ? 1 : std::max(1, fft_threads()); }

// Smallest even number >= n whose prime factors are 2, 3 and 5 (fast FFT sizes).
Index next_smooth_even(Index n) {
  if (n < 2) n = 2;
  for (Index m = n + (n % 2);; m += 2) {
    Index r = m;
    for (Index p : {2, 3, 5})
      while (r % p == 0) r /= p;
    if (r == 1) return m;
  }
}

inline Index wrap(Index i, Index n) {
  i %= n;
  return i < 0 ? i + n : i;
}

// Gauss–Legendre nodes and weights on [-1, 1] (Newton iteration on P_n from
// the Chebyshev-like initial guess; standard, written from memory).
void gauss_legendre(int n, std::vector<double>& x, std::vector<double>& w) {
  x.assign(static_cast<size_t>(n), 0.0);
  w.assign(static_cast<size_t>(n), 0.0);
  for (int i = 0; i < (n + 1) / 2; ++i) {
    double z = std::cos(kPi * (i + 0.75) / (n + 0.5));
    double dp = 1.0;
    for (int it = 0; it < 100; ++it) {
      double p0 = 1.0, p1 = z;
      for (int k = 2; k <= n; ++k) {
        const double p2 = ((2.0 * k - 1.0) * z * p1 - (k - 1.0) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      const double pn = n == 1 ? z : p1;
      const double pm = n == 1 ? 1.0 : p0;
      dp = n * (z * pn - pm) / (z * z - 1.0);
      const double dz = pn / dp;
      z -= dz;
      if (std::abs(dz) < 1e-16) break;
    }
    x[static_cast<size_t>(i)] = -z;
    x[static_cast<size_t>(n - 1 - i)] = z;
    const double wi = 2.0 / ((1.0 - z * z) * dp * dp);
    w[static_cast<size_t>(i)] = w[static_cast<size_t>(n - 1 - i)] = wi;
  }
}

}  // namespace

std::string_view to_string(NufftKernel k) { return k == NufftKernel::kExpSemicircle ? "es" : "kb"; }

std::optional<NufftKernel> parse_nufft_kernel(std::string_view text) {
  if (text == "es") return NufftKernel::kExpSemicircle;
  if (text == "kb") return NufftKernel::kKaiserBessel;
  return std::nullopt;
}

std::vector<std::string> NufftOptions::validate() const {
  std::vector<std::string> e;
  if (!(epsilon >= 1e-6 && epsilon <= 1e-1))
    e.push_back("nufft.epsilon = " + format_sig(epsilon, 6) + "; must be in [1e-6, 0.1]");
  if (!(oversampling >= 1.25 && oversampling <= 2.0))
    e.push_back("nufft.oversampling = " + format_sig(oversampling, 6) + "; must be in [1.25, 2]");
  if (width != 0 && (width < kMinWidth || width > kMaxWidth))
    e.push_back("nufft.width = " + std::to_string(width) + "; must be 0 (from epsilon) or " +
                std::to_string(kMinWidth) + ".." + std::to_string(kMaxWidth));
  return e;
}

std::string NufftKernelShape::to_string() const {
  char buf[160];
  std::snprintf(buf, sizeof buf, "%s w=%d beta=%.3g, grid %lldx%lld (sigma %.2f)",
                std::string(recofold::to_string(kernel)).c_str(), width, beta, static_cast<long long>(grid_ny),
                static_cast<long long>(grid_nx), std::min(sigma_y, sigma_x));
  return buf;
}

NufftKernelShape nufft_kernel_shape(Index ny, Index nx, const NufftOptions& o) {
  RECOFOLD_CHECK(ny >= 1 && nx >= 1) << "NUFFT image " << ny << "x" << nx;
  NufftKernelShape s;
  s.kernel = o.kernel;
  const double sigma = o.oversampling;
  int w = o.width;
  if (w == 0) {
    w = static_cast<int>(std::ceil(std::log(1.0 / o.epsilon) / (kPi * std::sqrt(1.0 - 1.0 / sigma))));
    w = std::clamp(w, kMinWidth, kMaxWidth);
  }
  s.width = w;
  // The grid must hold the kernel twice over so that tiles and wrap-around stay simple.
  s.grid_ny = next_smooth_even(std::max<Index>(static_cast<Index>(std::ceil(sigma * ny)), 2 * w));
  s.grid_nx = next_smooth_even(std::max<Index>(static_cast<Index>(std::ceil(sigma * nx)), 2 * w));
  s.sigma_y = static_cast<double>(s.grid_ny) / ny;
  s.sigma_x = static_cast<double>(s.grid_nx) / nx;
  if (o.kernel == NufftKernel::kExpSemicircle) {
    s.beta = 0.97 * kPi * (1.0 - 1.0 / (2.0 * sigma)) * w;
  } else {
    const double q = (static_cast<double>(w) * w) / (sigma * sigma) * (sigma - 0.5) * (sigma - 0.5) - 0.8;
    s.beta = kPi * std::sqrt(std::max(q, 1e-6));
  }
  return s;
}

double nufft_kernel_value(const NufftKernelShape& s, double z) {
  const double t = 2.0 * z / s.width;
  const double u = 1.0 - t * t;
  if (!(u > 0.0)) return 0.0;
  if (s.kernel == NufftKernel::kExpSemicircle) return std::exp(s.beta * (std::sqrt(u) - 1.0));
  return std::cyl_bessel_i(0.0, s.beta * std::sqrt(u)) / std::cyl_bessel_i(0.0, s.beta);
}

double nufft_kernel_fourier(const NufftKernelShape& s, double xi) {
  // φ is even and vanishes outside (-w/2, w/2): 2 ∫_0^{w/2} φ(z) cos(2π ξ z) dz.
  // The semicircle kernel has a square-root edge (a weak singularity of its
  // derivative at ±w/2, damped by exp(-β)); substituting z = w/2 sin(θ)
  // removes it, and the integrand in θ is smooth on [0, π/2].
  static thread_local std::vector<double> nodes, weights;
  const int q = 2 * kMaxWidth + 40;
  if (static_cast<int>(nodes.size()) != q) gauss_legendre(q, nodes, weights);
  const double half = 0.5 * s.width;
  double sum = 0.0;
  for (int i = 0; i < q; ++i) {
    const double theta = 0.25 * kPi * (nodes[static_cast<size_t>(i)] + 1.0);  // [0, π/2]
    const double z = half * std::sin(theta);
    const double dz = half * std::cos(theta) * 0.25 * kPi;
    sum += weights[static_cast<size_t>(i)] * nufft_kernel_value(s, z) * std::cos(2.0 * kPi * xi * z) * dz;
  }
  return 2.0 * sum;
}

void check_kspace_points(const VecD& kx, const VecD& ky, Index ny, Index nx, const std::string& file,
                         const std::string& field) {
  if (kx.size() != ky.size())
    throw InputError(file, field, "kx has " + std::to_string(kx.size()) + " values, ky " + std::to_string(ky.size()));
  if (kx.size() == 0) throw InputError(file, field, "no k-space points");
  const double lim_x = 0.5 * static_cast<double>(nx) * (1.0 + 1e-9);
  const double lim_y = 0.5 * static_cast<double>(ny) * (1.0 + 1e-9);
  for (Index j = 0; j < kx.size(); ++j) {
    if (!std::isfinite(kx[j]) || !std::isfinite(ky[j]))
      throw InputError(file, field, "point " + std::to_string(j) + " is not finite (" + format_sig(kx[j], 6) + ", " +
                                        format_sig(ky[j], 6) + ")");
    if (std::abs(kx[j]) > lim_x || std::abs(ky[j]) > lim_y) {
      std::ostringstream s;
      s << "point " << j << " (" << kx[j] << ", " << ky[j] << ") cycles per FOV is outside ±" << 0.5 * nx << " x ±"
        << 0.5 * ny << " (±0.5 cycles per pixel of the " << ny << "x" << nx << " grid)";
      throw InputError(file, field, s.str());
    }
  }
}

// ---------------------------------------------------------------------------
// NufftPlan

NufftPlan::NufftPlan(Index ny, Index nx, const VecD& kx, const VecD& ky, const NufftOptions& options)
    : ny_(ny), nx_(nx), m_(kx.size()), kx_(kx), ky_(ky), options_(options) {
  const auto errors = options.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
    const std::string& first = errors.front();
    throw InputError("", first.substr(0, first.find(' ')), all);
  }
  RECOFOLD_CHECK(ny >= 1 && nx >= 1) << "NUFFT image " << ny << "x" << nx;
  check_kspace_points(kx, ky, ny, nx);
  shape_ = nufft_kernel_shape(ny, nx, options);
  w_ = shape_.width;
  kernel_integral_ = nufft_kernel_fourier(shape_, 0.0);
  const Index gy = shape_.grid_ny, gx = shape_.grid_nx;

  // Deapodisation and placement of image rows/columns on the grid. Image
  // offset p = i - floor(n/2) goes to grid index p mod g; the factor (-1)^p
  // moves the grid's zero frequency to index g/2 (an fftshift in k), so that
  // points near the k-space centre never straddle the grid's wrap-around.
  auto axis = [&](Index n, Index g, std::vector<float>& deapod, std::vector<Index>& where) {
    deapod.resize(static_cast<size_t>(n));
    where.resize(static_cast<size_t>(n));
    const double norm = 1.0 / std::sqrt(static_cast<double>(n));
    for (Index i = 0; i < n; ++i) {
      const Index p = i - n / 2;
      const double sign = (wrap(p, 2) == 0) ? 1.0 : -1.0;
      const double phi_hat = nufft_kernel_fourier(shape_, static_cast<double>(p) / static_cast<double>(g));
      deapod[static_cast<size_t>(i)] = static_cast<float>(sign * norm / phi_hat);
      where[static_cast<size_t>(i)] = wrap(p, g);
    }
  };
  axis(ny, gy, deapod_y_, grid_row_);
  axis(nx, gx, deapod_x_, grid_col_);

  // Tiles along each axis: an even count (so that tiles of the same parity
  // are never neighbours, also across the wrap-around) of at least w cells.
  auto tiling = [&](Index g) {
    Index nt = std::max<Index>(1, g / kTileCells);
    if (nt >= 2) nt -= nt % 2;
    while (nt >= 2 && g / nt < w_) nt -= 2;
    if (nt < 2) nt = 1;
    std::vector<Index> bounds(static_cast<size_t>(nt + 1));
    for (Index i = 0; i <= nt; ++i) bounds[static_cast<size_t>(i)] = i * g / nt;
    return bounds;
  };
  const std::vector<Index> by = tiling(gy), bx = tiling(gx);
  const Index nty = static_cast<Index>(by.size()) - 1, ntx = static_cast<Index>(bx.size()) - 1;
  std::vector<Index> tile_of_row(static_cast<size_t>(gy)), tile_of_col(static_cast<size_t>(gx));
  for (Index t = 0; t < nty; ++t)
    for (Index r = by[static_cast<size_t>(t)]; r < by[static_cast<size_t>(t + 1)]; ++r) tile_of_row[static_cast<size_t>(r)] = t;
  for (Index t = 0; t < ntx; ++t)
    for (Index c = bx[static_cast<size_t>(t)]; c < bx[static_cast<size_t>(t + 1)]; ++c) tile_of_col[static_cast<size_t>(c)] = t;

  // First cell of each point and its tile. A point at κ (grid cells, zero
  // frequency at g/2) uses cells l0 .. l0 + w - 1 with l0 = ceil(κ - w/2).
  std::vector<Index> l0y(static_cast<size_t>(m_)), l0x(static_cast<size_t>(m_)), tile(static_cast<size_t>(m_));
  std::vector<double> fy(static_cast<size_t>(m_)), fx(static_cast<size_t>(m_));
  for (Index j = 0; j < m_; ++j) {
    // Row axis: frequency -ky (rows run down while y runs up).
    const double ky_grid = -ky[j] * static_cast<double>(gy) / static_cast<double>(ny) + static_cast<double>(gy / 2);
    const double kx_grid = kx[j] * static_cast<double>(gx) / static_cast<double>(nx) + static_cast<double>(gx / 2);
    const Index ay = static_cast<Index>(std::ceil(ky_grid - 0.5 * w_));
    const Index ax = static_cast<Index>(std::ceil(kx_grid - 0.5 * w_));
    fy[static_cast<size_t>(j)] = ky_grid - static_cast<double>(ay);  // distance of cell l0 from the point
    fx[static_cast<size_t>(j)] = kx_grid - static_cast<double>(ax);
    l0y[static_cast<size_t>(j)] = wrap(ay, gy);
    l0x[static_cast<size_t>(j)] = wrap(ax, gx);
    tile[static_cast<size_t>(j)] = tile_of_row[static_cast<size_t>(l0y[static_cast<size_t>(j)])] * ntx +
                                   tile_of_col[static_cast<size_t>(l0x[static_cast<size_t>(j)])];
  }
  order_.resize(static_cast<size_t>(m_));
  std::iota(order_.begin(), order_.end(), Index{0});
  std::stable_sort(order_.begin(), order_.end(),
                   [&](Index a, Index b) { return tile[static_cast<size_t>(a)] < tile[static_cast<size_t>(b)]; });

  const size_t mw = static_cast<size_t>(m_) * static_cast<size_t>(w_);
  wy_.resize(mw);
  wx_.resize(mw);
  oy_.resize(static_cast<size_t>(m_));
  ox_.resize(static_cast<size_t>(m_));
  colour_tiles_.assign(4, {});
  for (Index s = 0; s < m_;) {
    const Index t = tile[static_cast<size_t>(order_[static_cast<size_t>(s)])];
    Index e = s;
    while (e < m_ && tile[static_cast<size_t>(order_[static_cast<size_t>(e)])] == t) ++e;
    const Index ty = t / ntx, tx = t % ntx;
    Tile tl{by[static_cast<size_t>(ty)], bx[static_cast<size_t>(tx)],
            by[static_cast<size_t>(ty + 1)] - by[static_cast<size_t>(ty)],
            bx[static_cast<size_t>(tx + 1)] - bx[static_cast<size_t>(tx)], s, e};
    colour_tiles_[static_cast<size_t>((ty % 2) * 2 + (tx % 2))].push_back(static_cast<Index>(tiles_.size()));
    tiles_.push_back(tl);
    s = e;
  }
#pragma omp parallel for schedule(static) if (m_ > 4096)
  for (Index s = 0; s < m_; ++s) {
    const size_t j = static_cast<size_t>(order_[static_cast<size_t>(s)]);
    // Offsets relative to the first cell of the point's tile.
    const Index ty = tile_of_row[static_cast<size_t>(l0y[j])], tx = tile_of_col[static_cast<size_t>(l0x[j])];
    oy_[static_cast<size_t>(s)] = static_cast<int32_t>(l0y[j] - by[static_cast<size_t>(ty)]);
    ox_[static_cast<size_t>(s)] = static_cast<int32_t>(l0x[j] - bx[static_cast<size_t>(tx)]);
    float* wyp = wy_.data() + static_cast<size_t>(s) * static_cast<size_t>(w_);
    float* wxp = wx_.data() + static_cast<size_t>(s) * static_cast<size_t>(w_);
    for (int a = 0; a < w_; ++a) {
      wyp[a] = static_cast<float>(nufft_kernel_value(shape_, fy[j] - a));
      wxp[a] = static_cast<float>(nufft_kernel_value(shape_, fx[j] - a));
    }
  }
}

size_t NufftPlan::memory_bytes() const {
  return sizeof(float) * (wy_.size() + wx_.size()) + sizeof(int32_t) * (oy_.size() + ox_.size()) +
         sizeof(Index) * order_.size() + sizeof(Tile) * tiles_.size() + 2 * sizeof(double) * static_cast<size_t>(m_);
}

template <typename Body>
void NufftPlan::for_each_tile_coloured(int threads, bool coloured, Body&& body) const {
  const int t = std::max(1, threads);
#pragma omp parallel num_threads(t) if (t > 1)
  {
    const Index pad = w_ - 1;
    std::vector<cfloat> local(static_cast<size_t>((kTileCells * 2 + pad) * (kTileCells * 2 + pad)));
    if (coloured) {
      for (int colour = 0; colour < 4; ++colour) {
        const auto& list = colour_tiles_[static_cast<size_t>(colour)];
        const Index n = static_cast<Index>(list.size());
#pragma omp for schedule(dynamic, 1)
        for (Index i = 0; i < n; ++i) body(tiles_[static_cast<size_t>(list[static_cast<size_t>(i)])], local);
        // the implicit barrier of the loop separates the colours
      }
    } else {
      const Index n = static_cast<Index>(tiles_.size());
#pragma omp for schedule(dynamic, 1)
      for (Index i = 0; i < n; ++i) body(tiles_[static_cast<size_t>(i)], local);
    }
  }
}

void NufftPlan::spread(const cfloat* values, cfloat* grid, int threads) const {
  const Index gy = shape_.grid_ny, gx = shape_.grid_nx;
  const int w = w_;
  for_each_tile_coloured(threads, true, [&](const Tile& tl, std::vector<cfloat>& local) {
    const Index lh = tl.height + w - 1, lw = tl.width + w - 1;
    if (local.size() < static_cast<size_t>(lh * lw)) local.resize(static_cast<size_t>(lh * lw));
    std::fill(local.begin(), local.begin() + lh * lw, cfloat(0.0f, 0.0f));
    float* lp = reinterpret_cast<float*>(local.data());
    for (Index s = tl.begin; s < tl.end; ++s) {
      const cfloat v = values[order_[static_cast<size_t>(s)]];
      const float* wyp = wy_.data() + static_cast<size_t>(s) * static_cast<size_t>(w);
      const float* wxp = wx_.data() + static_cast<size_t>(s) * static_cast<size_t>(w);
      const Index oy = oy_[static_cast<size_t>(s)], ox = ox_[static_cast<size_t>(s)];
      // Row weights times the value once, then a real-by-complex inner loop.
      float vx[2 * kMaxWidth];
      for (int b = 0; b < w; ++b) {
        vx[2 * b] = v.real() * wxp[b];
        vx[2 * b + 1] = v.imag() * wxp[b];
      }
      for (int a = 0; a < w; ++a) {
        float* row = lp + 2 * ((oy + a) * lw + ox);
        const float wa = wyp[a];
        for (int b = 0; b < 2 * w; ++b) row[b] += wa * vx[b];
      }
    }
    // Add the tile buffer onto the grid (with wrap-around).
    for (Index r = 0; r < lh; ++r) {
      Index gr = tl.y0 + r;
      if (gr >= gy) gr -= gy;
      cfloat* grow = grid + gr * gx;
      const cfloat* lrow = local.data() + r * lw;
      const Index direct = std::min(lw, gx - tl.x0);
      for (Index c = 0; c < direct; ++c) grow[tl.x0 + c] += lrow[c];
      for (Index c = direct; c < lw; ++c) grow[tl.x0 + c - gx] += lrow[c];
    }
  });
}

void NufftPlan::interpolate(const cfloat* grid, cfloat* values, int threads) const {
  const Index gy = shape_.grid_ny, gx = shape_.grid_nx;
  const int w = w_;
  for_each_tile_coloured(threads, false, [&](const Tile& tl, std::vector<cfloat>& local) {
    const Index lh = tl.height + w - 1, lw = tl.width + w - 1;
    if (local.size() < static_cast<size_t>(lh * lw)) local.resize(static_cast<size_t>(lh * lw));
    // Copy the tile's cells (with wrap-around) so the inner loops need no modulo.
    for (Index r = 0; r < lh; ++r) {
      Index gr = tl.y0 + r;
      if (gr >= gy) gr -= gy;
      const cfloat* grow = grid + gr * gx;
      cfloat* lrow = local.data() + r * lw;
      const Index direct = std::min(lw, gx - tl.x0);
      std::memcpy(lrow, grow + tl.x0, sizeof(cfloat) * static_cast<size_t>(direct));
      if (direct < lw) std::memcpy(lrow + direct, grow, sizeof(cfloat) * static_cast<size_t>(lw - direct));
    }
    const float* lp = reinterpret_cast<const float*>(local.data());
    for (Index s = tl.begin; s < tl.end; ++s) {
      const float* wyp = wy_.data() + static_cast<size_t>(s) * static_cast<size_t>(w);
      const float* wxp = wx_.data() + static_cast<size_t>(s) * static_cast<size_t>(w);
      const Index oy = oy_[static_cast<size_t>(s)], ox = ox_[static_cast<size_t>(s)];
      float acc[2 * kMaxWidth] = {};
      for (int a = 0; a < w; ++a) {
        const float* row = lp + 2 * ((oy + a) * lw + ox);
        const float wa = wyp[a];
        for (int b = 0; b < 2 * w; ++b) acc[b] += wa * row[b];
      }
      float re = 0.0f, im = 0.0f;
      for (int b = 0; b < w; ++b) {
        re += wxp[b] * acc[2 * b];
        im += wxp[b] * acc[2 * b + 1];
      }
      values[order_[static_cast<size_t>(s)]] = cfloat(re, im);
    }
  });
}

void NufftPlan::forward(const cfloat* image, cfloat* values) const {
  const Index gy = shape_.grid_ny, gx = shape_.grid_nx;
  const int threads = threads_here();
  cfloat* grid = grid_buffer(static_cast<size_t>(gy * gx), 0);
#pragma omp parallel for num_threads(threads) schedule(static) if (threads > 1)
  for (Index r = 0; r < gy; ++r) std::fill(grid + r * gx, grid + (r + 1) * gx, cfloat(0.0f, 0.0f));
  for (Index iy = 0; iy < ny_; ++iy) {
    cfloat* grow = grid + grid_row_[static_cast<size_t>(iy)] * gx;
    const cfloat* irow = image + iy * nx_;
    const float dy = deapod_y_[static_cast<size_t>(iy)];
    for (Index ix = 0; ix < nx_; ++ix)
      grow[grid_col_[static_cast<size_t>(ix)]] = irow[ix] * (dy * deapod_x_[static_cast<size_t>(ix)]);
  }
  internal::fft_execute_inplace(grid, gy, gx, FftDirection::kForward, threads);
  interpolate(grid, values, threads);
}

void NufftPlan::adjoint(const cfloat* values, cfloat* image) const {
  const Index gy = shape_.grid_ny, gx = shape_.grid_nx;
  const int threads = threads_here();
  cfloat* grid = grid_buffer(static_cast<size_t>(gy * gx), 0);
#pragma omp parallel for num_threads(threads) schedule(static) if (threads > 1)
  for (Index r = 0; r < gy; ++r) std::fill(grid + r * gx, grid + (r + 1) * gx, cfloat(0.0f, 0.0f));
  spread(values, grid, threads);
  internal::fft_execute_inplace(grid, gy, gx, FftDirection::kInverse, threads);
  for (Index iy = 0; iy < ny_; ++iy) {
    const cfloat* grow = grid + grid_row_[static_cast<size_t>(iy)] * gx;
    cfloat* irow = image + iy * nx_;
    const float dy = deapod_y_[static_cast<size_t>(iy)];
    for (Index ix = 0; ix < nx_; ++ix)
      irow[ix] = grow[grid_col_[static_cast<size_t>(ix)]] * (dy * deapod_x_[static_cast<size_t>(ix)]);
  }
}

void NufftPlan::convolve_at_points(const float* w, float* out) const {
  const Index gy = shape_.grid_ny, gx = shape_.grid_nx;
  const int threads = threads_here();
  cfloat* grid = grid_buffer(static_cast<size_t>(gy * gx), 0);
  std::fill(grid, grid + gy * gx, cfloat(0.0f, 0.0f));
  std::vector<cfloat> v(static_cast<size_t>(m_)), r(static_cast<size_t>(m_));
  for (Index j = 0; j < m_; ++j) v[static_cast<size_t>(j)] = cfloat(w[j], 0.0f);
  spread(v.data(), grid, threads);
  interpolate(grid, r.data(), threads);
  for (Index j = 0; j < m_; ++j) out[j] = r[static_cast<size_t>(j)].real();
}

// ---------------------------------------------------------------------------
// Toeplitz normal operator

ToeplitzNormal::ToeplitzNormal(const NufftPlan& plan, const std::vector<float>& weights)
    : ny_(plan.ny()), nx_(plan.nx()) {
  const Index m = plan.points();
  RECOFOLD_CHECK(weights.empty() || static_cast<Index>(weights.size()) == m)
      << "Toeplitz weights " << weights.size() << " for " << m << " points";
  const Index ly = 2 * ny_, lx = 2 * nx_, n = ny_ * nx_;
  // T(d) on the offsets |d| < n per axis, in four blocks d = p + c: p runs
  // over the plan's own image offsets and the block shift c is -ceil(n/2) or
  // floor(n/2) per axis, so each block is one type-1 transform of the plan
  // with the weights modulated by exp(+i 2π (kx cx/nx - ky cy/ny)):
  //   T(p + c) = 1/sqrt(ny nx) · adjoint(w ∘ modulation)[p].
  // No FFT size other than the plan's grid and the 2n embedding is needed.
  // T is computed once, so it is computed accurately: with a plan of the same
  // grid at ε = 1e-6 unless the given plan is at least that accurate.
  std::unique_ptr<NufftPlan> fine;
  if (plan.options().epsilon > 1e-6 && plan.options().width == 0) {
    NufftOptions o = plan.options();
    o.epsilon = 1e-6;
    fine = std::make_unique<NufftPlan>(ny_, nx_, plan.kx(), plan.ky(), o);
  }
  const NufftPlan& src = fine ? *fine : plan;
  cfloat* grid = grid_buffer(static_cast<size_t>(ly * lx), 1);
  std::fill(grid, grid + ly * lx, cfloat(0.0f, 0.0f));
  std::vector<cfloat> v(static_cast<size_t>(m)), block(static_cast<size_t>(n));
  const double inv_sqrt_n = 1.0 / std::sqrt(static_cast<double>(n));
  for (const Index cy : {-(ny_ + 1) / 2, ny_ / 2})
    for (const Index cx : {-(nx_ + 1) / 2, nx_ / 2}) {
      for (Index j = 0; j < m; ++j) {
        const double wj = weights.empty() ? 1.0 : static_cast<double>(weights[static_cast<size_t>(j)]);
        const double arg = 2.0 * kPi * (plan.kx()[j] * static_cast<double>(cx) / static_cast<double>(nx_) -
                                        plan.ky()[j] * static_cast<double>(cy) / static_cast<double>(ny_));
        v[static_cast<size_t>(j)] = cfloat(static_cast<float>(wj * std::cos(arg)), static_cast<float>(wj * std::sin(arg)));
      }
      src.adjoint(v.data(), block.data());
      for (Index iy = 0; iy < ny_; ++iy) {
        const Index dy = iy - ny_ / 2 + cy;
        if (dy <= -ny_ || dy >= ny_) continue;
        for (Index ix = 0; ix < nx_; ++ix) {
          const Index dx = ix - nx_ / 2 + cx;
          if (dx <= -nx_ || dx >= nx_) continue;
          grid[wrap(dy, ly) * lx + wrap(dx, lx)] = block[static_cast<size_t>(iy * nx_ + ix)] * static_cast<float>(inv_sqrt_n);
        }
      }
    }
  // Circulant embedding on [2ny, 2nx]: c[d mod 2n] = T(d); the offsets d = -n
  // stay zero. T(-d) = conj(T(d)) (real weights), so the spectrum is real:
  // keeping its real part makes the operator exactly Hermitian.
  internal::fft_execute_inplace(grid, ly, lx, FftDirection::kForward, threads_here());
  spectrum_.resize(static_cast<size_t>(ly * lx));
  const double norm = 1.0 / (static_cast<double>(ly) * static_cast<double>(lx));
  for (Index i = 0; i < ly * lx; ++i) spectrum_[static_cast<size_t>(i)] = static_cast<float>(grid[i].real() * norm);
}

void ToeplitzNormal::apply(const cfloat* x, cfloat* out) const {
  const Index ly = 2 * ny_, lx = 2 * nx_;
  const int threads = threads_here();
  cfloat* grid = grid_buffer(static_cast<size_t>(ly * lx), 1);
  // The pointwise passes run on the FFT's threads too (rows are independent).
#pragma omp parallel for schedule(static) num_threads(threads) if (threads > 1)
  for (Index r = 0; r < ly; ++r) {
    if (r < ny_) {
      std::memcpy(grid + r * lx, x + r * nx_, sizeof(cfloat) * static_cast<size_t>(nx_));
      std::fill(grid + r * lx + nx_, grid + (r + 1) * lx, cfloat(0.0f, 0.0f));
    } else {
      std::fill(grid + r * lx, grid + (r + 1) * lx, cfloat(0.0f, 0.0f));
    }
  }
  internal::fft_execute_inplace(grid, ly, lx, FftDirection::kForward, threads);
  const float* s = spectrum_.data();
#pragma omp parallel for schedule(static) num_threads(threads) if (threads > 1)
  for (Index r = 0; r < ly; ++r) {
    cfloat* g = grid + r * lx;
    const float* sr = s + r * lx;
    for (Index i = 0; i < lx; ++i) g[i] *= sr[i];
  }
  internal::fft_execute_inplace(grid, ly, lx, FftDirection::kInverse, threads);
#pragma omp parallel for schedule(static) num_threads(threads) if (threads > 1)
  for (Index r = 0; r < ny_; ++r) std::memcpy(out + r * nx_, grid + r * lx, sizeof(cfloat) * static_cast<size_t>(nx_));
}

// ---------------------------------------------------------------------------
// Operators

Nufft::Nufft(std::shared_ptr<const NufftPlan> plan) : plan_(std::move(plan)) { RECOFOLD_CHECK(plan_ != nullptr); }

void Nufft::apply(const VecC& x, VecC& y) const {
  RECOFOLD_CHECK(x.size() == plan_->ny() * plan_->nx()) << name() << ": input has " << x.size() << " values";
  y.resize(plan_->points());
  plan_->forward(x.data(), y.data());
}

void Nufft::adjoint(const VecC& y, VecC& x) const {
  RECOFOLD_CHECK(y.size() == plan_->points()) << name() << ": input has " << y.size() << " values";
  x.resize(plan_->ny() * plan_->nx());
  plan_->adjoint(y.data(), x.data());
}

void Nufft::normal(const VecC& x, VecC& out) const {
  RECOFOLD_CHECK(x.size() == plan_->ny() * plan_->nx()) << name() << ": input has " << x.size() << " values";
  std::call_once(toeplitz_once_, [&] { toeplitz_ = std::make_unique<ToeplitzNormal>(*plan_); });
  out.resize(x.size());
  toeplitz_->apply(x.data(), out.data());
}

std::string Nufft::name() const {
  std::ostringstream s;
  s << "NUFFT " << plan_->ny() << "x" << plan_->nx() << ", " << plan_->points() << " points, "
    << to_string(plan_->kernel().kernel) << " w=" << plan_->kernel().width;
  return s.str();
}

SenseNufft::SenseNufft(std::shared_ptr<const NufftPlan> plan, NdArray<cfloat> coil_maps)
    : plan_(std::move(plan)), maps_(std::move(coil_maps)) {
  RECOFOLD_CHECK(plan_ != nullptr);
  if (!maps_.data.empty()) {
    RECOFOLD_CHECK(maps_.shape.rank() == 3 && maps_.shape[1] == plan_->ny() && maps_.shape[2] == plan_->nx())
        << "coil maps " << maps_.shape.to_string() << " for a " << plan_->ny() << "x" << plan_->nx() << " plan";
    coils_ = maps_.shape[0];
  }
}

const ToeplitzNormal& SenseNufft::toeplitz() const {
  std::call_once(toeplitz_once_, [&] { toeplitz_ = std::make_unique<ToeplitzNormal>(*plan_); });
  return *toeplitz_;
}

namespace {
// Coils side by side when there are several and we are not nested already.
int coil_threads(Index coils) {
  if (omp_in_parallel() || coils < 2) return 1;
  return static_cast<int>(std::min<Index>(coils, std::max(1, fft_threads())));
}
}  // namespace

void SenseNufft::apply(const VecC& x, VecC& y) const {
  const Index n = plan_->ny() * plan_->nx(), m = plan_->points();
  RECOFOLD_CHECK(x.size() == n) << name() << ": input has " << x.size() << " values";
  y.resize(coils_ * m);
  if (maps_.data.empty()) {
    plan_->forward(x.data(), y.data());
    return;
  }
  const int threads = coil_threads(coils_);
#pragma omp parallel num_threads(threads) if (threads > 1)
  {
    std::vector<cfloat> prod(static_cast<size_t>(n));
#pragma omp for schedule(dynamic, 1)
    for (Index c = 0; c < coils_; ++c) {
      const cfloat* s = maps_.ptr() + c * n;
      for (Index i = 0; i < n; ++i) prod[static_cast<size_t>(i)] = internal::mul(s[i], x[i]);
      plan_->forward(prod.data(), y.data() + c * m);
    }
  }
}

void SenseNufft::adjoint(const VecC& y, VecC& x) const {
  const Index n = plan_->ny() * plan_->nx(), m = plan_->points();
  RECOFOLD_CHECK(y.size() == coils_ * m) << name() << ": input has " << y.size() << " values";
  x.resize(n);
  if (maps_.data.empty()) {
    plan_->adjoint(y.data(), x.data());
    return;
  }
  const int threads = coil_threads(coils_);
  std::vector<std::vector<cfloat>> partial(static_cast<size_t>(threads));
#pragma omp parallel num_threads(threads) if (threads > 1)
  {
    const int t = omp_get_thread_num();
    std::vector<cfloat>& acc = partial[static_cast<size_t>(t)];
    acc.assign(static_cast<size_t>(n), cfloat(0.0f, 0.0f));
    std::vector<cfloat> img(static_cast<size_t>(n));
#pragma omp for schedule(static)
    for (Index c = 0; c < coils_; ++c) {
      plan_->adjoint(y.data() + c * m, img.data());
      const cfloat* s = maps_.ptr() + c * n;
      for (Index i = 0; i < n; ++i) acc[static_cast<size_t>(i)] += internal::mul_conj(s[i], img[static_cast<size_t>(i)]);
    }
  }
  // Fixed summation order over threads (static schedule): same bytes every run.
  for (Index i = 0; i < n; ++i) {
    cfloat v(0.0f, 0.0f);
    for (const auto& p : partial) v += p[static_cast<size_t>(i)];
    x[i] = v;
  }
}

void SenseNufft::normal(const VecC& x, VecC& out) const {
  const Index n = plan_->ny() * plan_->nx();
  RECOFOLD_CHECK(x.size() == n) << name() << ": input has " << x.size() << " values";
  const ToeplitzNormal& t = toeplitz();
  out.resize(n);
  if (maps_.data.empty()) {
    t.apply(x.data(), out.data());
    return;
  }
  const int threads = coil_threads(coils_);
  std::vector<std::vector<cfloat>> partial(static_cast<size_t>(threads));
#pragma omp parallel num_threads(threads) if (threads > 1)
  {
    const int tn = omp_get_thread_num();
    std::vector<cfloat>& acc = partial[static_cast<size_t>(tn)];
    acc.assign(static_cast<size_t>(n), cfloat(0.0f, 0.0f));
    std::vector<cfloat> prod(static_cast<size_t>(n)), img(static_cast<size_t>(n));
#pragma omp for schedule(static)
    for (Index c = 0; c < coils_; ++c) {
      const cfloat* s = maps_.ptr() + c * n;
      for (Index i = 0; i < n; ++i) prod[static_cast<size_t>(i)] = internal::mul(s[i], x[i]);
      t.apply(prod.data(), img.data());
      for (Index i = 0; i < n; ++i) acc[static_cast<size_t>(i)] += internal::mul_conj(s[i], img[static_cast<size_t>(i)]);
    }
  }
  for (Index i = 0; i < n; ++i) {
    cfloat v(0.0f, 0.0f);
    for (const auto& p : partial) v += p[static_cast<size_t>(i)];
    out[i] = v;
  }
}

std::string SenseNufft::name() const {
  std::ostringstream s;
  s << "SENSE-NUFFT " << coils_ << " coil" << (coils_ == 1 ? "" : "s") << " " << plan_->ny() << "x" << plan_->nx()
    << ", " << plan_->points() << " points, " << to_string(plan_->kernel().kernel) << " w=" << plan_->kernel().width;
  return s.str();
}

}  // namespace recofold
