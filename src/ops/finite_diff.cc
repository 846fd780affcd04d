// SPDX-License-Identifier: Apache-2.0
// Forward differences and their adjoint (negative divergence), Neumann or periodic.
#include "recofold/ops/finite_diff.h"

#include <algorithm>

#include "recofold/core/error.h"
#include "recofold/core/simd.h"

namespace recofold {

std::string_view to_string(DiffBoundary boundary) {
  return boundary == DiffBoundary::kPeriodic ? "periodic" : "neumann";
}

std::optional<DiffBoundary> parse_diff_boundary(std::string_view text) {
  if (text == "neumann") return DiffBoundary::kNeumann;
  if (text == "periodic") return DiffBoundary::kPeriodic;
  return std::nullopt;
}

FiniteDifference::FiniteDifference(Shape image_shape, DiffBoundary boundary)
    : shape_(std::move(image_shape)), boundary_(boundary) {
  if (shape_.rank() != 2 || shape_[0] < 1 || shape_[1] < 1)
    throw InputError("", "finite_difference.shape", "needs a 2-D shape [ny, nx], got " + shape_.to_string());
}

std::string FiniteDifference::name() const {
  return "finite differences (" + std::string(to_string(boundary_)) + ") " + std::to_string(shape_[0]) + "x" +
         std::to_string(shape_[1]);
}

bool FiniteDifference::absolute_sums(VecF& row_sums, VecF& column_sums) const {
  const Index ny = shape_[0], nx = shape_[1];
  const bool periodic = boundary_ == DiffBoundary::kPeriodic;
  // Along an axis of length n, position i: its own difference has entries
  // (+1 at i+1, -1 at i) unless it is the Neumann last row or n == 1 (the
  // periodic self-difference is 0); position i is the +1 of the difference
  // at i-1 (or, periodic, at n-1 for i = 0).
  auto own = [periodic](Index i, Index n) { return n > 1 && (i < n - 1 || periodic); };
  auto received = [periodic](Index i, Index n) { return n > 1 && (i > 0 || periodic); };
  row_sums.resize(2 * ny * nx);
  column_sums.resize(ny * nx);
  for (Index r = 0; r < ny; ++r)
    for (Index c = 0; c < nx; ++c) {
      row_sums[r * nx + c] = own(r, ny) ? 2.0f : 0.0f;
      row_sums[ny * nx + r * nx + c] = own(c, nx) ? 2.0f : 0.0f;
      column_sums[r * nx + c] = float(int(own(r, ny)) + int(received(r, ny)) + int(own(c, nx)) + int(received(c, nx)));
    }
  return true;
}

namespace {

constexpr Index kParallelPixels = 65536;  // OpenMP from 256^2 up

// One row of D x on the interleaved float view: y0 = next row - row (xd null:
// the Neumann last row, all zero), y1 = column neighbour - column.
RECOFOLD_SIMD_CLONES void diff_row(const float* __restrict xr, const float* __restrict xd, Index w, bool periodic,
                                   float* __restrict y0, float* __restrict y1) {
  if (xd) {
    for (Index j = 0; j < w; ++j) y0[j] = xd[j] - xr[j];
  } else {
    for (Index j = 0; j < w; ++j) y0[j] = 0.0f;
  }
  for (Index j = 0; j < w - 2; ++j) y1[j] = xr[j + 2] - xr[j];
  y1[w - 2] = periodic ? xr[0] - xr[w - 2] : 0.0f;
  y1[w - 1] = periodic ? xr[1] - xr[w - 1] : 0.0f;
}

}  // namespace

// Both loops work on the interleaved float view of the complex vectors (a row
// is 2 nx floats; the column neighbour is 2 floats away), so every inner loop
// is a contiguous, vectorisable float loop, and the rows run in parallel.
void FiniteDifference::apply(const VecC& x, VecC& y) const {
  const Index ny = shape_[0], nx = shape_[1], n = ny * nx;
  RECOFOLD_CHECK(x.size() == n) << "finite differences of size " << x.size() << " for " << shape_.to_string();
  y.resize(2 * n);
  const bool periodic = boundary_ == DiffBoundary::kPeriodic;
  const float* xf = reinterpret_cast<const float*>(x.data());
  float* yf = reinterpret_cast<float*>(y.data());
  const Index w = 2 * nx;
  auto row = [&](Index r) {
    const float* xd = r + 1 < ny ? xf + (r + 1) * w : (periodic ? xf : nullptr);
    diff_row(xf + r * w, xd, w, periodic, yf + r * w, yf + 2 * n + r * w);
  };
  // Explicit serial branch: no one-thread OpenMP regions (they allocate a team each time).
  if (n >= kParallelPixels) {
#pragma omp parallel for schedule(static)
    for (Index r = 0; r < ny; ++r) row(r);
  } else {
    for (Index r = 0; r < ny; ++r) row(r);
  }
}

namespace {

// One row of x = D^H y on the interleaved float view (row length w = 2 nx).
// `up`: the previous row of y0 (null when absent), `down`: whether this row's
// own y0 counts, `periodic`: whether the column differences wrap.
template <bool kUp, bool kDown>
RECOFOLD_KERNEL void adjoint_row(const float* __restrict y0u, const float* __restrict y0, const float* __restrict y1, Index w,
                 bool periodic, float* __restrict xr) {
  auto term = [&](Index j, bool has_left, Index left, bool has_own) {
    float acc;
    if (kUp) {
      acc = y0u[j];
      if (has_left) acc += y1[left];
    } else {
      acc = has_left ? y1[left] : 0.0f;
    }
    if (kDown) acc -= y0[j];
    if (has_own) acc -= y1[j];
    return acc;
  };
  const bool single = w == 2;  // one column: its own y1 counts only when periodic (then it is x - x)
  for (Index j = 0; j < 2; ++j) xr[j] = term(j, periodic, w - 2 + j, single ? periodic : true);
#pragma omp simd
  for (Index j = 2; j < w - 2; ++j) {
    float acc = kUp ? y0u[j] + y1[j - 2] : y1[j - 2];
    if (kDown) acc -= y0[j];
    xr[j] = acc - y1[j];
  }
  if (!single)
    for (Index j = w - 2; j < w; ++j) xr[j] = term(j, true, j - 2, periodic);
}

// Non-template entry, cloned per instruction set.
RECOFOLD_SIMD_CLONES void adjoint_row_any(const float* y0u, const float* y0, const float* y1, Index w, bool up,
                                          bool down, bool periodic, float* xr) {
  if (up && down)
    adjoint_row<true, true>(y0u, y0, y1, w, periodic, xr);
  else if (up)
    adjoint_row<true, false>(y0u, y0, y1, w, periodic, xr);
  else if (down)
    adjoint_row<false, true>(y0u, y0, y1, w, periodic, xr);
  else
    adjoint_row<false, false>(y0u, y0, y1, w, periodic, xr);
}

}  // namespace

// x = D^H y, gathered per pixel:
//   x[r, c] = y0[r-1, c] + y1[r, c-1] - y0[r, c] - y1[r, c]
// where a difference the boundary rule sets to 0 (Neumann: the last row of
// y0, the last column of y1) contributes nothing, and periodic indices wrap.
// The terms are added in the order the former scatter loop used, so results
// are bit for bit the same as before except at the wrapped first row/column
// of periodic images (rounding of a different summation order).
void FiniteDifference::adjoint(const VecC& y, VecC& x) const {
  const Index ny = shape_[0], nx = shape_[1], n = ny * nx;
  RECOFOLD_CHECK(y.size() == 2 * n) << "finite-difference adjoint of size " << y.size() << " for "
                                    << shape_.to_string();
  x.resize(n);
  const bool periodic = boundary_ == DiffBoundary::kPeriodic;
  const float* yf = reinterpret_cast<const float*>(y.data());
  float* xf = reinterpret_cast<float*>(x.data());
  const Index w = 2 * nx;
  auto row = [&](Index r) {
    const float* y0 = yf + r * w;
    const float* y1 = yf + 2 * n + r * w;
    const float* y0u = yf + (r > 0 ? r - 1 : ny - 1) * w;
    const bool up = r > 0 || periodic, down = r + 1 < ny || periodic;
    adjoint_row_any(y0u, y0, y1, w, up, down, periodic, xf + r * w);
  };
  if (n >= kParallelPixels) {
#pragma omp parallel for schedule(static)
    for (Index r = 0; r < ny; ++r) row(r);
  } else {
    for (Index r = 0; r < ny; ++r) row(r);
  }
}

}  // namespace recofold
