// SPDX-License-Identifier: Apache-2.0
// Joseph projector / exact transpose: ray table set-up and the two OpenMP loops.
#include "recofold/ops/joseph_projector.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/measurement.h"

namespace recofold {

namespace {

constexpr Index kBlock = 16;  // image rows (columns) per task of the transpose

// Padded position of a ray at step r; the same expression in both directions
// keeps the pair an exact transpose.
inline float position(float start, float slope, int r) { return start + static_cast<float>(r) * slope; }

inline bool inside(float p, int n) { return p >= 0.0f && p < static_cast<float>(n + 1); }

// Sum along one ray over steps [lo, hi] of a padded grid (stride n + 2).
inline float ray_sum(const float* grid, Index stride, float start, float slope, int lo, int hi) {
  float acc = 0.0f;
  for (int r = lo; r <= hi; ++r) {
    const float p = position(start, slope, r);
    const int i = static_cast<int>(p);  // p >= 0, so truncation is floor
    const float f = p - static_cast<float>(i);
    const float* row = grid + r * stride;
    acc += row[i] + f * (row[i + 1] - row[i]);
  }
  return acc;
}

// Transpose of ray_sum restricted to steps [lo, hi].
inline void ray_scatter(float* grid, Index stride, float start, float slope, int lo, int hi, float value) {
  for (int r = lo; r <= hi; ++r) {
    const float p = position(start, slope, r);
    const int i = static_cast<int>(p);
    const float f = p - static_cast<float>(i);
    float* row = grid + r * stride;
    row[i] += (1.0f - f) * value;
    row[i + 1] += f * value;
  }
}

}  // namespace

JosephProjector::JosephProjector(CtGeometry geometry, double scale) : geometry_(std::move(geometry)), scale_(scale) {
  auto errors = geometry_.validate();
  if (!std::isfinite(scale_)) errors.push_back("scale is not finite");
  if (!errors.empty()) {
    std::string all;
    for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
    throw InputError("", "ct geometry", all);
  }
  const CtGeometry& g = geometry_;
  const Index nv = g.view_count(), nd = g.detector_count;
  const double px = g.pixel_size_mm;
  const double cx = 0.5 * double(g.nx - 1), cy = 0.5 * double(g.ny - 1);
  rays_.resize(static_cast<size_t>(nv * nd));
  for (Index v = 0; v < nv; ++v) {
    for (Index j = 0; j < nd; ++j) {
      const CtRay cr = g.ray(v, j);
      double wx = cr.bx - cr.ax, wy = cr.by - cr.ay;
      const double len = std::hypot(wx, wy);
      wx /= len;
      wy /= len;
      Ray& ray = rays_[static_cast<size_t>(v * nd + j)];
      int steps, n;
      if (std::abs(wy) >= std::abs(wx)) {
        // Row r sits at y = (cy - r) px; padded column = x / px + cx + 1.
        ray.by_rows = true;
        const double y0 = cy * px;
        const double x0 = cr.ax + (y0 - cr.ay) * wx / wy;
        ray.start = static_cast<float>(x0 / px + cx + 1.0);
        ray.slope = static_cast<float>(-wx / wy);
        ray.weight = static_cast<float>(px / std::abs(wy));
        steps = static_cast<int>(g.ny);
        n = static_cast<int>(g.nx);
      } else {
        // Column c sits at x = (c - cx) px; padded row = cy - y / px + 1.
        ray.by_rows = false;
        any_by_columns_ = true;
        const double x0 = -cx * px;
        const double y0 = cr.ay + (x0 - cr.ax) * wy / wx;
        ray.start = static_cast<float>(cy - y0 / px + 1.0);
        ray.slope = static_cast<float>(-wy / wx);
        ray.weight = static_cast<float>(px / std::abs(wx));
        steps = static_cast<int>(g.nx);
        n = static_cast<int>(g.ny);
      }
      // Steps whose position lies in [0, n+1): estimate, then settle with the
      // exact float expression (positions are monotone in r).
      int lo = 0, hi = steps - 1;
      if (ray.slope != 0.0f) {
        const double ra = (0.0 - ray.start) / ray.slope, rb = (n + 1.0 - ray.start) / ray.slope;
        lo = static_cast<int>(std::clamp(std::floor(std::min(ra, rb)), 0.0, double(steps - 1)));
        hi = static_cast<int>(std::clamp(std::ceil(std::max(ra, rb)), 0.0, double(steps - 1)));
      }
      while (lo > 0 && inside(position(ray.start, ray.slope, lo - 1), n)) --lo;
      while (lo <= hi && !inside(position(ray.start, ray.slope, lo), n)) ++lo;
      while (hi < steps - 1 && inside(position(ray.start, ray.slope, hi + 1), n)) ++hi;
      while (hi >= lo && !inside(position(ray.start, ray.slope, hi), n)) --hi;
      ray.lo = lo;
      ray.hi = hi;
    }
  }
}

std::string JosephProjector::name() const {
  std::ostringstream s;
  s << "Joseph " << geometry_.describe() << " on " << geometry_.ny << "x" << geometry_.nx;
  return s.str();
}

void JosephProjector::project(const float* image, float* sinogram) const {
  const Index ny = geometry_.ny, nx = geometry_.nx;
  const Index nv = geometry_.view_count(), nd = geometry_.detector_count;
  const Index rs = nx + 2, cs = ny + 2;
  std::vector<float> rows(static_cast<size_t>(ny * rs), 0.0f);
  std::vector<float> cols(any_by_columns_ ? static_cast<size_t>(nx * cs) : 0, 0.0f);
#pragma omp parallel
  {
#pragma omp for schedule(static)
    for (Index r = 0; r < ny; ++r)
      std::copy(image + r * nx, image + (r + 1) * nx, rows.data() + r * rs + 1);
    if (any_by_columns_) {
#pragma omp for schedule(static)
      for (Index c = 0; c < nx; ++c)
        for (Index r = 0; r < ny; ++r) cols[static_cast<size_t>(c * cs + r + 1)] = image[r * nx + c];
    }
#pragma omp for schedule(dynamic, 1)
    for (Index v = 0; v < nv; ++v) {
      for (Index j = 0; j < nd; ++j) {
        const Ray& ray = rays_[static_cast<size_t>(v * nd + j)];
        float s = 0.0f;
        if (ray.lo <= ray.hi) {
          s = ray.by_rows ? ray_sum(rows.data(), rs, ray.start, ray.slope, ray.lo, ray.hi)
                          : ray_sum(cols.data(), cs, ray.start, ray.slope, ray.lo, ray.hi);
        }
        sinogram[v * nd + j] = static_cast<float>(scale_ * ray.weight * s);
      }
    }
  }
}

void JosephProjector::back_project(const float* sinogram, float* image) const {
  const Index ny = geometry_.ny, nx = geometry_.nx;
  const Index nrays = static_cast<Index>(rays_.size());
  const Index rs = nx + 2, cs = ny + 2;
  std::vector<float> rows(static_cast<size_t>(ny * rs), 0.0f);
  std::vector<float> cols(any_by_columns_ ? static_cast<size_t>(nx * cs) : 0, 0.0f);
  const Index row_blocks = (ny + kBlock - 1) / kBlock, col_blocks = (nx + kBlock - 1) / kBlock;
  const Index col_tasks = any_by_columns_ ? col_blocks : 0;
#pragma omp parallel
  {
    // Each task owns a block of rows of one accumulator: no two threads write
    // the same element.
#pragma omp for schedule(dynamic, 1)
    for (Index task = 0; task < row_blocks + col_tasks; ++task) {
      const bool by_rows = task < row_blocks;
      const Index b = by_rows ? task : task - row_blocks;
      const int b0 = static_cast<int>(b * kBlock);
      const int b1 = static_cast<int>(std::min<Index>((b + 1) * kBlock, by_rows ? ny : nx)) - 1;
      float* grid = by_rows ? rows.data() : cols.data();
      const Index stride = by_rows ? rs : cs;
      for (Index k = 0; k < nrays; ++k) {
        const Ray& ray = rays_[static_cast<size_t>(k)];
        if (ray.by_rows != by_rows) continue;
        const int lo = std::max(ray.lo, b0), hi = std::min(ray.hi, b1);
        if (lo > hi) continue;
        const float value = static_cast<float>(scale_ * ray.weight * sinogram[k]);
        if (value == 0.0f) continue;
        ray_scatter(grid, stride, ray.start, ray.slope, lo, hi, value);
      }
    }
#pragma omp for schedule(static)
    for (Index r = 0; r < ny; ++r) {
      for (Index c = 0; c < nx; ++c) {
        float v = rows[static_cast<size_t>(r * rs + c + 1)];
        if (any_by_columns_) v += cols[static_cast<size_t>(c * cs + r + 1)];
        image[r * nx + c] = v;
      }
    }
  }
}

void JosephProjector::apply(const VecC& x, VecC& y) const {
  RECOFOLD_CHECK(x.size() == domain_size()) << "Joseph apply: input size " << x.size() << ", domain " << domain_size();
  const Index n = x.size(), m = range_size();
  VecF part(n), out(m);
  for (Index i = 0; i < n; ++i) part[i] = x[i].real();
  project(part.data(), out.data());
  y.resize(m);
  for (Index i = 0; i < m; ++i) y[i] = cfloat(out[i], 0.0f);
  bool complex_input = false;
  for (Index i = 0; i < n && !complex_input; ++i) complex_input = x[i].imag() != 0.0f;
  if (complex_input) {
    for (Index i = 0; i < n; ++i) part[i] = x[i].imag();
    project(part.data(), out.data());
    for (Index i = 0; i < m; ++i) y[i].imag(out[i]);
  }
}

void JosephProjector::adjoint(const VecC& y, VecC& x) const {
  RECOFOLD_CHECK(y.size() == range_size()) << "Joseph adjoint: input size " << y.size() << ", range " << range_size();
  const Index n = domain_size(), m = y.size();
  VecF part(m), out(n);
  for (Index i = 0; i < m; ++i) part[i] = y[i].real();
  back_project(part.data(), out.data());
  x.resize(n);
  for (Index i = 0; i < n; ++i) x[i] = cfloat(out[i], 0.0f);
  bool complex_input = false;
  for (Index i = 0; i < m && !complex_input; ++i) complex_input = y[i].imag() != 0.0f;
  if (complex_input) {
    for (Index i = 0; i < m; ++i) part[i] = y[i].imag();
    back_project(part.data(), out.data());
    for (Index i = 0; i < n; ++i) x[i].imag(out[i]);
  }
}

std::unique_ptr<JosephProjector> make_ct_operator(const Measurement& m, const std::string& file) {
  CtGeometry g = ct_geometry_from(m, file);
  const double mu = m.ct->mu_per_mm;
  if (!(mu > 0.0) || !std::isfinite(mu))
    throw InputError(file, "/ct/mu_per_mm", std::to_string(mu) + "; must be > 0");
  return std::make_unique<JosephProjector>(std::move(g), mu);
}

VecC ct_sinogram_vector(const Measurement& m) {
  RECOFOLD_CHECK(m.ct.has_value()) << "ct_sinogram_vector of a measurement without CT data";
  const auto& s = m.ct->sinogram;
  VecC y(s.size());
  for (Index i = 0; i < s.size(); ++i) y[i] = cfloat(s.data[static_cast<size_t>(i)], 0.0f);
  return y;
}

}  // namespace recofold
