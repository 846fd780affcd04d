// SPDX-License-Identifier: Apache-2.0
// Non-uniform FFT: image -> arbitrary k-space points (type 2) and its exact adjoint (type 1),
// the Toeplitz normal operator and the multi-coil SENSE-NUFFT operator.
//
// Coordinates. A point k = (kx, ky) is in cycles per field of view in the
// phantom's orientation (x to the right, y up; phantom.h), so the Cartesian
// grid of an ny x nx image sits at integer k, kx in [-floor(nx/2), ceil(nx/2)-1],
// ky likewise (row index runs down while y runs up, so row offset n holds
// ky = -n). Valid points satisfy |kx| <= nx/2 and |ky| <= ny/2 (±0.5 cycles per
// pixel); others are refused.
//
// Transform (type 2, "forward"), with the centred orthonormal scaling of fft.h:
//   y_j = 1/sqrt(ny nx) Σ_{iy,ix} x[iy, ix] exp(-i 2π (kx_j px / nx - ky_j py / ny)),
//   px = ix - floor(nx/2),  py = iy - floor(ny/2),
// so at integer points y equals fft2c(x) (the Cartesian path at grid points).
// Adjoint (type 1): x[iy, ix] = 1/sqrt(ny nx) Σ_j y_j exp(+i 2π (...)).
//
// Algorithm (Dutt & Rokhlin, SIAM J. Sci. Comput. 14, 1993; Jackson et al.,
// IEEE TMI 10, 1991; Beatty, Nishimura & Pauly, IEEE TMI 24, 2005): divide the
// image by the kernel's Fourier transform (deapodisation), zero-pad it onto an
// oversampled grid of σ·n cells per axis, FFT, and interpolate each point from
// the w x w grid cells around it with a separable kernel φ of width w cells;
// the adjoint spreads, inverse-FFTs, crops and deapodises with the same
// factors, so it is the exact adjoint of the forward operator as implemented.
// Kernels (z in grid cells, |z| < w/2):
//   exponential of semicircle (Barnett, Magland & af Klinteberg, SIAM J. Sci.
//     Comput. 41, 2019): φ(z) = exp(β (sqrt(1 - (2z/w)²) - 1)), β = 0.97 π (1 - 1/(2σ)) w;
//   Kaiser–Bessel: φ(z) = I0(β sqrt(1 - (2z/w)²)) / I0(β),
//     β = π sqrt(w²/σ² (σ - 1/2)² - 0.8) (Beatty et al. 2005).
// Width from the requested accuracy ε (from memory of Barnett et al.; checked
// against a direct non-uniform DFT in tests/reference/ops_nufft_numpy.py,
// where the measured error is 0.6 to 1.8 ε):
//   w = ceil(ln(1/ε) / (π sqrt(1 - 1/σ))), at least 2, at most 16
//   (σ = 2: ε = 1e-2 → 3, 1e-4 → 5, 1e-6 → 7; σ = 1.25: 1e-2 → 4, 1e-4 → 7, 1e-6 → 10).
// The kernel's Fourier transform for the deapodisation is computed by
// Gauss–Legendre quadrature (no closed form for the semicircle kernel).
//
// Speed: points are binned once per trajectory (the plan): each point's
// kernel weights and first grid cell are stored, sorted by tiles of about
// 32 x 32 cells. Spreading is race-free without atomics: tiles are processed
// in four colour passes (tile row parity x tile column parity), tiles of one
// colour never touch the same cells, and each tile first spreads into a small
// private buffer. Results do not depend on the number of threads.
//
// Accuracy reached in single precision (float32 data, kernel weights and
// deapodisation computed in double, then rounded): relative ℓ2 error against
// the direct transform ≈ ε for σ = 2 down to ε = 1e-6 (measured 1.3e-6); with
// σ = 1.25 the deapodisation amplifies float32 rounding near the image edge
// and the error stops falling at about 3e-5 (DEVELOPERS.md, "NUFFT accuracy").
#pragma once

#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/ops/linear_operator.h"

namespace recofold {

enum class NufftKernel {
  kExpSemicircle,  // "es": exponential of semicircle (default)
  kKaiserBessel,   // "kb": Kaiser–Bessel
};
std::string_view to_string(NufftKernel k);
std::optional<NufftKernel> parse_nufft_kernel(std::string_view text);  // "es" | "kb"

struct NufftOptions {
  // Requested relative accuracy of the transform, in [1e-6, 1e-1]; sets the
  // kernel width (above). 1e-4 is plenty for reconstruction (the float32
  // pipeline and the noise are far coarser); 1e-6 for reference checks.
  double epsilon = 1e-4;
  // Grid oversampling σ, in [1.25, 2]: 2 (default) is fastest per accuracy;
  // 1.25 needs (1.25/2)² ≈ 0.39 of the grid memory for a wider kernel. The
  // grid size is σ n rounded up to an even number with prime factors 2, 3, 5
  // (so the σ actually used may be slightly larger).
  double oversampling = 2.0;
  NufftKernel kernel = NufftKernel::kExpSemicircle;
  // Kernel width in grid cells, 2..16; 0 (default) = from epsilon.
  int width = 0;

  // Every violation as "nufft.<field> = value; rule"; empty means valid.
  std::vector<std::string> validate() const;
};

// The kernel and grid a plan uses.
struct NufftKernelShape {
  NufftKernel kernel = NufftKernel::kExpSemicircle;
  int width = 0;                   // w, grid cells
  double beta = 0.0;               // shape parameter
  Index grid_ny = 0, grid_nx = 0;  // oversampled grid (even)
  double sigma_y = 0.0, sigma_x = 0.0;  // grid / image size actually used
  std::string to_string() const;   // "es w=6 beta=13.7, grid 512x512 (sigma 2.00)"
};

// The kernel shape options give for an ny x nx image (options must be valid).
NufftKernelShape nufft_kernel_shape(Index ny, Index nx, const NufftOptions& options);

// φ(z) of a kernel shape, z in grid cells (0 outside |z| < w/2).
double nufft_kernel_value(const NufftKernelShape& shape, double z);
// Its Fourier transform ∫ φ(z) exp(-i 2π ξ z) dz (real, even), by quadrature.
double nufft_kernel_fourier(const NufftKernelShape& shape, double xi);

// Checks points for a grid: finite, |kx| <= nx/2, |ky| <= ny/2. Throws
// InputError(file, field, "point j: ...") naming the first bad point.
void check_kspace_points(const VecD& kx, const VecD& ky, Index ny, Index nx, const std::string& file = "",
                         const std::string& field = "/trajectory/k");

// A NUFFT plan: the points of one trajectory binned for one image size.
// Immutable after construction; forward/adjoint are const and thread-safe.
// Inside an OpenMP parallel region (coils or cases side by side) a call runs
// on the calling thread only; otherwise it uses fft_threads() threads.
class NufftPlan {
 public:
  // kx, ky: M points (M >= 1) in cycles per FOV; checked by
  // check_kspace_points (InputError). Invalid options throw InputError
  // naming the option ("nufft.epsilon").
  NufftPlan(Index ny, Index nx, const VecD& kx, const VecD& ky, const NufftOptions& options = {});

  Index ny() const { return ny_; }
  Index nx() const { return nx_; }
  Index points() const { return m_; }
  const VecD& kx() const { return kx_; }
  const VecD& ky() const { return ky_; }
  const NufftOptions& options() const { return options_; }
  const NufftKernelShape& kernel() const { return shape_; }

  // Type 2: values[M] = A image[ny, nx] (row-major).
  void forward(const cfloat* image, cfloat* values) const;
  // Type 1: image[ny, nx] = A^H values[M].
  void adjoint(const cfloat* values, cfloat* image) const;
  // Kernel convolution at the points, out_j = Σ_l φ(κ_j - l) Σ_i φ(κ_i - l) w_i
  // (spread onto the grid, interpolate back; no FFT), with κ the points in
  // grid cells: the density estimate of Pipe & Menon's iteration.
  void convolve_at_points(const float* w, float* out) const;
  // ∫ φ(z) dz of the kernel (for normalising that density estimate).
  double kernel_integral() const { return kernel_integral_; }
  // Bytes held by the plan (weights, indices, tables).
  size_t memory_bytes() const;

 private:
  struct Tile {
    Index y0, x0, height, width;  // first cell and size of the tile
    Index begin, end;             // its points in sorted order: [begin, end)
  };
  template <typename Body>
  void for_each_tile_coloured(int threads, bool coloured, Body&& body) const;
  void spread(const cfloat* values, cfloat* grid, int threads) const;
  void interpolate(const cfloat* grid, cfloat* values, int threads) const;

  Index ny_, nx_, m_;
  VecD kx_, ky_;
  NufftOptions options_;
  NufftKernelShape shape_;
  double kernel_integral_ = 0.0;
  int w_ = 0;
  std::vector<float> wy_, wx_;          // [M][w] kernel weights, sorted order
  std::vector<int32_t> oy_, ox_;        // first cell of each point relative to its tile
  std::vector<Index> order_;            // sorted position -> original point index
  std::vector<Tile> tiles_;             // non-empty tiles
  std::vector<std::vector<Index>> colour_tiles_;  // tile indices per colour (4)
  std::vector<float> deapod_y_, deapod_x_;  // per image row / column: sign / (φ^(ξ) sqrt(n))
  std::vector<Index> grid_row_, grid_col_;  // grid row / column of each image row / column
};

// The normal operator A^H W A of a NUFFT by Toeplitz embedding (Wajer &
// Pruessmann, 2001; Fessler et al., IEEE TSP 53, 2005):
//   (A^H W A x)[p] = Σ_q T(p - q) x[q],  T(d) = 1/(ny nx) Σ_j w_j exp(+i 2π (kx_j dx/nx - ky_j dy/ny)),
// a convolution with a kernel on offsets |d| < n, applied as a product on a
// 2ny x 2nx circulant grid: pad x, FFT, multiply by the kernel's spectrum,
// inverse FFT, crop (two FFTs on the 2x grid, no gridding per call). T is
// computed once, by four type-1 transforms on the plan's grid (one per block
// of offsets) at ε = 1e-6 (or the plan's ε when smaller). W is diagonal (real weights
// w_j >= 0, e.g. a density compensation); empty = all ones. The result is
// Hermitian by construction (the spectrum is kept real).
class ToeplitzNormal {
 public:
  ToeplitzNormal(const NufftPlan& plan, const std::vector<float>& weights = {});
  // out[ny, nx] = A^H W A x; out may not alias x. Thread-safe.
  void apply(const cfloat* x, cfloat* out) const;
  Index ny() const { return ny_; }
  Index nx() const { return nx_; }

 private:
  Index ny_, nx_;
  std::vector<float> spectrum_;  // [2ny, 2nx], includes 1/(4 ny nx)
};

// Single-coil NUFFT as an operator: domain [ny, nx], range [M].
// normal() uses the Toeplitz embedding (built on first use).
class Nufft final : public LinearOperator {
 public:
  explicit Nufft(std::shared_ptr<const NufftPlan> plan);
  void apply(const VecC& x, VecC& y) const override;
  void adjoint(const VecC& y, VecC& x) const override;
  void normal(const VecC& x, VecC& out) const override;
  Shape domain_shape() const override { return Shape{plan_->ny(), plan_->nx()}; }
  Shape range_shape() const override { return Shape{plan_->points()}; }
  std::string name() const override;  // "NUFFT 256x256, 32768 points, es w=6"
  const NufftPlan& plan() const { return *plan_; }

 private:
  std::shared_ptr<const NufftPlan> plan_;
  mutable std::once_flag toeplitz_once_;
  mutable std::unique_ptr<ToeplitzNormal> toeplitz_;
};

// Multi-coil SENSE-NUFFT E: image [ny, nx] -> values [C, M]:
//   y_c = A (S_c ∘ x)                      (apply)
//   x   = Σ_c conj(S_c) ∘ A^H y_c           (adjoint)
//   E^H E x = Σ_c conj(S_c) ∘ T(S_c ∘ x)    (normal, Toeplitz: two FFTs of the 2x grid per coil)
// S_c are coil sensitivities [C, ny, nx]; an empty array means one coil with
// S = 1. Coils run side by side on fft_threads() threads (each transform on
// one thread); a single coil uses the plan's threads. Thread-safe.
class SenseNufft final : public LinearOperator {
 public:
  SenseNufft(std::shared_ptr<const NufftPlan> plan, NdArray<cfloat> coil_maps = {});
  void apply(const VecC& x, VecC& y) const override;
  void adjoint(const VecC& y, VecC& x) const override;
  void normal(const VecC& x, VecC& out) const override;
  Shape domain_shape() const override { return Shape{plan_->ny(), plan_->nx()}; }
  Shape range_shape() const override { return Shape{coils_, plan_->points()}; }
  std::string name() const override;  // "SENSE-NUFFT 8 coils 256x256, 32768 points, es w=6"

  Index coils() const { return coils_; }
  const NufftPlan& plan() const { return *plan_; }
  std::shared_ptr<const NufftPlan> shared_plan() const { return plan_; }
  const NdArray<cfloat>& coil_maps() const { return maps_; }
  // The Toeplitz normal operator (built on first use; thread-safe).
  const ToeplitzNormal& toeplitz() const;

 private:
  std::shared_ptr<const NufftPlan> plan_;
  NdArray<cfloat> maps_;
  Index coils_ = 1;
  mutable std::once_flag toeplitz_once_;
  mutable std::unique_ptr<ToeplitzNormal> toeplitz_;
};

}  // namespace recofold
