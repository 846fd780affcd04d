// SPDX-License-Identifier: Apache-2.0
// Joseph projector / exact transpose: ray table set-up and the two OpenMP loops.
#include "recofold/ops/joseph_projector.h"

#include <omp.h>

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

// Detector range [lo, hi] whose positions base + j * delta lie in [0, n + 1)
// for j in [0, count); estimate, then settle with the exact float expression
// (positions are monotone in j). Empty when lo > hi.
inline void detector_range(float base, float delta, int n, int count, int& lo, int& hi) {
  const double a = (0.0 - base) / delta, b = (n + 1.0 - base) / delta;
  lo = static_cast<int>(std::clamp(std::floor(std::min(a, b)), 0.0, double(count - 1)));
  hi = static_cast<int>(std::clamp(std::ceil(std::max(a, b)), 0.0, double(count - 1)));
  auto in = [&](int j) { return inside(base + static_cast<float>(j) * delta, n); };
  while (lo > 0 && in(lo - 1)) --lo;
  while (lo <= hi && !in(lo)) ++lo;
  while (hi < count - 1 && in(hi + 1)) ++hi;
  while (hi >= lo && !in(hi)) --hi;
}

}  // namespace

// Buffers kept between calls (ScratchCache): padded image grids, the weighted
// sinogram, real/imaginary parts of complex vectors, per-thread detector rows.
struct JosephProjector::Workspace {
  std::vector<float> rows, cols, sw, part, out, image, thread_acc, thread_left, thread_right;
  std::vector<int> thread_index;
};

JosephProjector::JosephProjector(const JosephProjector& other) = default;
JosephProjector::~JosephProjector() = default;

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
  parallel_ = g.beam == CtBeam::kParallel;

  // Start (double), slope, weight and axis of ray (v, j).
  struct Line {
    double start, slope, weight;
    bool by_rows;
  };
  auto line_of = [&](Index v, Index j) {
    const CtRay cr = g.ray(v, j);
    double wx = cr.bx - cr.ax, wy = cr.by - cr.ay;
    const double len = std::hypot(wx, wy);
    wx /= len;
    wy /= len;
    Line l;
    if (std::abs(wy) >= std::abs(wx)) {
      // Row r sits at y = (cy - r) px; padded column = x / px + cx + 1.
      const double y0 = cy * px;
      const double x0 = cr.ax + (y0 - cr.ay) * wx / wy;
      l = Line{x0 / px + cx + 1.0, -wx / wy, px / std::abs(wy), true};
    } else {
      // Column c sits at x = (c - cx) px; padded row = cy - y / px + 1.
      const double x0 = -cx * px;
      const double y0 = cr.ay + (x0 - cr.ax) * wy / wx;
      l = Line{cy - y0 / px + 1.0, -wy / wx, px / std::abs(wx), false};
    }
    return l;
  };

  if (parallel_) {
    views_.resize(static_cast<size_t>(nv));
    for (Index v = 0; v < nv; ++v) {
      const Line first = line_of(v, 0);
      ParallelView& pv = views_[static_cast<size_t>(v)];
      pv.by_rows = first.by_rows;
      pv.start0 = static_cast<float>(first.start);
      pv.delta = nd > 1 ? static_cast<float>((line_of(v, nd - 1).start - first.start) / double(nd - 1)) : 1.0f;
      if (pv.delta == 0.0f) pv.delta = 1e-30f;  // only for a single detector
      pv.slope = static_cast<float>(first.slope);
      pv.weight = static_cast<float>(first.weight);
      any_by_columns_ = any_by_columns_ || !pv.by_rows;
    }
    return;
  }

  rays_.resize(static_cast<size_t>(nv * nd));
  for (Index v = 0; v < nv; ++v) {
    for (Index j = 0; j < nd; ++j) {
      const Line l = line_of(v, j);
      Ray& ray = rays_[static_cast<size_t>(v * nd + j)];
      ray.by_rows = l.by_rows;
      ray.start = static_cast<float>(l.start);
      ray.slope = static_cast<float>(l.slope);
      ray.weight = static_cast<float>(l.weight);
      any_by_columns_ = any_by_columns_ || !l.by_rows;
      const int steps = static_cast<int>(l.by_rows ? g.ny : g.nx);
      const int n = static_cast<int>(l.by_rows ? g.nx : g.ny);
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
  auto lease = scratch_.borrow();
  project_with(*lease, image, sinogram);
}

void JosephProjector::project_with(Workspace& ws, const float* image, float* sinogram) const {
  const Index ny = geometry_.ny, nx = geometry_.nx;
  const Index rs = nx + 2, cs = ny + 2;
  ws.rows.resize(static_cast<size_t>(ny * rs));
  ws.cols.resize(any_by_columns_ ? static_cast<size_t>(nx * cs) : 0);
  float* rows = ws.rows.data();
  float* cols = ws.cols.data();
#pragma omp parallel
  {
    // Interior copied, the two padding entries of each row (column) set to zero:
    // the buffers are reused and may hold a back-projection's sums.
#pragma omp for schedule(static)
    for (Index r = 0; r < ny; ++r) {
      float* row = rows + r * rs;
      row[0] = row[nx + 1] = 0.0f;
      std::copy(image + r * nx, image + (r + 1) * nx, row + 1);
    }
    if (any_by_columns_) {
      // Blocked transpose into the padded column grid.
#pragma omp for schedule(static)
      for (Index c0 = 0; c0 < nx; c0 += 32) {
        for (Index c = c0; c < std::min(c0 + 32, nx); ++c) cols[c * cs] = cols[c * cs + ny + 1] = 0.0f;
        for (Index r0 = 0; r0 < ny; r0 += 32)
          for (Index c = c0; c < std::min(c0 + 32, nx); ++c)
            for (Index r = r0; r < std::min(r0 + 32, ny); ++r) cols[c * cs + r + 1] = image[r * nx + c];
      }
    }
  }
  if (parallel_)
    project_parallel(ws, rows, cols, sinogram);
  else
    project_rays(rows, cols, sinogram);
}

void JosephProjector::project_parallel(Workspace& ws, const float* rows, const float* cols, float* sinogram) const {
  const Index nv = geometry_.view_count(), nd = geometry_.detector_count;
  const Index rs = geometry_.nx + 2, cs = geometry_.ny + 2;
  const int max_threads = omp_get_max_threads();
  ws.thread_acc.resize(static_cast<size_t>(max_threads * nd));
#pragma omp parallel num_threads(max_threads)
  {
    float* const acc_row = ws.thread_acc.data() + omp_get_thread_num() * nd;
#pragma omp for schedule(dynamic, 1)
    for (Index v = 0; v < nv; ++v) {
      const ParallelView& pv = views_[static_cast<size_t>(v)];
      const float* grid = pv.by_rows ? rows : cols;
      const Index stride = pv.by_rows ? rs : cs;
      const int steps = static_cast<int>(pv.by_rows ? geometry_.ny : geometry_.nx);
      const int n = static_cast<int>(pv.by_rows ? geometry_.nx : geometry_.ny);
      std::fill(acc_row, acc_row + nd, 0.0f);
      float* a = acc_row;
      const float delta = pv.delta;
      for (int r = 0; r < steps; ++r) {
        const float base = position(pv.start0, pv.slope, r);
        int lo, hi;
        detector_range(base, delta, n, static_cast<int>(nd), lo, hi);
        const float* row = grid + r * stride;
#pragma omp simd
        for (int j = lo; j <= hi; ++j) {
          const float p = base + static_cast<float>(j) * delta;
          const int i = static_cast<int>(p);
          const float f = p - static_cast<float>(i);
          a[j] += row[i] + f * (row[i + 1] - row[i]);
        }
      }
      const float w = static_cast<float>(scale_ * pv.weight);
      for (Index j = 0; j < nd; ++j) sinogram[v * nd + j] = w * a[j];
    }
  }
}

void JosephProjector::project_rays(const float* rows, const float* cols, float* sinogram) const {
  const Index nv = geometry_.view_count(), nd = geometry_.detector_count;
  const Index rs = geometry_.nx + 2, cs = geometry_.ny + 2;
#pragma omp parallel for schedule(dynamic, 1)
  for (Index v = 0; v < nv; ++v) {
    for (Index j = 0; j < nd; ++j) {
      const Ray& ray = rays_[static_cast<size_t>(v * nd + j)];
      float s = 0.0f;
      if (ray.lo <= ray.hi) {
        s = ray.by_rows ? ray_sum(rows, rs, ray.start, ray.slope, ray.lo, ray.hi)
                        : ray_sum(cols, cs, ray.start, ray.slope, ray.lo, ray.hi);
      }
      sinogram[v * nd + j] = static_cast<float>(scale_ * ray.weight * s);
    }
  }
}

void JosephProjector::back_project(const float* sinogram, float* image) const {
  auto lease = scratch_.borrow();
  back_project_with(*lease, sinogram, image);
}

void JosephProjector::back_project_with(Workspace& ws, const float* sinogram, float* image) const {
  const Index ny = geometry_.ny, nx = geometry_.nx;
  const Index rs = nx + 2, cs = ny + 2;
  ws.rows.assign(static_cast<size_t>(ny * rs), 0.0f);
  ws.cols.assign(any_by_columns_ ? static_cast<size_t>(nx * cs) : 0, 0.0f);
  float* rows = ws.rows.data();
  float* cols = ws.cols.data();
  if (parallel_)
    back_project_parallel(ws, sinogram, rows, cols);
  else
    back_project_rays(sinogram, rows, cols);
#pragma omp parallel for schedule(static)
  for (Index r = 0; r < ny; ++r) {
    for (Index c = 0; c < nx; ++c) {
      float v = rows[static_cast<size_t>(r * rs + c + 1)];
      if (any_by_columns_) v += cols[static_cast<size_t>(c * cs + r + 1)];
      image[r * nx + c] = v;
    }
  }
}

void JosephProjector::back_project_parallel(Workspace& ws, const float* sinogram, float* rows, float* cols) const {
  const Index ny = geometry_.ny, nx = geometry_.nx;
  const Index nv = geometry_.view_count(), nd = geometry_.detector_count;
  const Index rs = nx + 2, cs = ny + 2;
  const Index row_blocks = (ny + kBlock - 1) / kBlock, col_blocks = (nx + kBlock - 1) / kBlock;
  const Index col_tasks = any_by_columns_ ? col_blocks : 0;
  // Sinogram times each view's scale * weight, once.
  std::vector<float>& sw = ws.sw;
  sw.resize(static_cast<size_t>(nv * nd));
  for (Index v = 0; v < nv; ++v) {
    const float w = static_cast<float>(scale_ * views_[static_cast<size_t>(v)].weight);
    for (Index j = 0; j < nd; ++j) sw[static_cast<size_t>(v * nd + j)] = w * sinogram[v * nd + j];
  }
  // Each task owns a block of rows of one accumulator: no two threads write
  // the same element.
  const int max_threads = omp_get_max_threads();
  ws.thread_index.resize(static_cast<size_t>(max_threads * nd));
  ws.thread_left.resize(static_cast<size_t>(max_threads * nd));
  ws.thread_right.resize(static_cast<size_t>(max_threads * nd));
#pragma omp parallel num_threads(max_threads)
  {
    const Index t = omp_get_thread_num();
    int* index = ws.thread_index.data() + t * nd;
    float* left = ws.thread_left.data() + t * nd;
    float* right = ws.thread_right.data() + t * nd;
#pragma omp for schedule(dynamic, 1)
    for (Index task = 0; task < row_blocks + col_tasks; ++task) {
      const bool by_rows = task < row_blocks;
      const Index b = by_rows ? task : task - row_blocks;
      const int b0 = static_cast<int>(b * kBlock);
      const int b1 = static_cast<int>(std::min<Index>((b + 1) * kBlock, by_rows ? ny : nx));
      float* grid = by_rows ? rows : cols;
      const Index stride = by_rows ? rs : cs;
      const int n = static_cast<int>(by_rows ? nx : ny);
      for (Index v = 0; v < nv; ++v) {
        const ParallelView& pv = views_[static_cast<size_t>(v)];
        if (pv.by_rows != by_rows) continue;
        const float* s = sw.data() + v * nd;
        const float delta = pv.delta;
        for (int r = b0; r < b1; ++r) {
          const float base = position(pv.start0, pv.slope, r);
          int lo, hi;
          detector_range(base, delta, n, static_cast<int>(nd), lo, hi);
          float* row = grid + r * stride;
          // Positions and weights first (vectorised), then the scatter, which
          // may hit one pixel from several rays and so stays scalar.
#pragma omp simd
          for (int j = lo; j <= hi; ++j) {
            const float p = base + static_cast<float>(j) * delta;
            const int i = static_cast<int>(p);
            const float f = p - static_cast<float>(i);
            index[j] = i;
            right[j] = f * s[j];
            left[j] = s[j] - right[j];
          }
          for (int j = lo; j <= hi; ++j) {
            row[index[j]] += left[j];
            row[index[j] + 1] += right[j];
          }
        }
      }
    }
  }
}

void JosephProjector::back_project_rays(const float* sinogram, float* rows, float* cols) const {
  const Index ny = geometry_.ny, nx = geometry_.nx;
  const Index nrays = static_cast<Index>(rays_.size());
  const Index rs = nx + 2, cs = ny + 2;
  const Index row_blocks = (ny + kBlock - 1) / kBlock, col_blocks = (nx + kBlock - 1) / kBlock;
  const Index col_tasks = any_by_columns_ ? col_blocks : 0;
#pragma omp parallel for schedule(dynamic, 1)
  for (Index task = 0; task < row_blocks + col_tasks; ++task) {
    const bool by_rows = task < row_blocks;
    const Index b = by_rows ? task : task - row_blocks;
    const int b0 = static_cast<int>(b * kBlock);
    const int b1 = static_cast<int>(std::min<Index>((b + 1) * kBlock, by_rows ? ny : nx)) - 1;
    float* grid = by_rows ? rows : cols;
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
}

bool JosephProjector::absolute_sums(VecF& row_sums, VecF& column_sums) const {
  row_sums.resize(range_size());
  column_sums.resize(domain_size());
  const std::vector<float> ones_image(static_cast<size_t>(domain_size()), 1.0f);
  const std::vector<float> ones_sinogram(static_cast<size_t>(range_size()), 1.0f);
  project(ones_image.data(), row_sums.data());
  back_project(ones_sinogram.data(), column_sums.data());
  row_sums = row_sums.cwiseAbs();
  column_sums = column_sums.cwiseAbs();
  return true;
}

void JosephProjector::apply(const VecC& x, VecC& y) const {
  RECOFOLD_CHECK(x.size() == domain_size()) << "Joseph apply: input size " << x.size() << ", domain " << domain_size();
  const Index n = x.size(), m = range_size();
  auto lease = scratch_.borrow();
  Workspace& ws = *lease;
  ws.part.resize(static_cast<size_t>(std::max(n, m)));
  ws.out.resize(static_cast<size_t>(std::max(n, m)));
  float* part = ws.part.data();
  float* out = ws.out.data();
  for (Index i = 0; i < n; ++i) part[i] = x[i].real();
  project_with(ws, part, out);
  y.resize(m);
  for (Index i = 0; i < m; ++i) y[i] = cfloat(out[i], 0.0f);
  bool complex_input = false;
  for (Index i = 0; i < n && !complex_input; ++i) complex_input = x[i].imag() != 0.0f;
  if (complex_input) {
    for (Index i = 0; i < n; ++i) part[i] = x[i].imag();
    project_with(ws, part, out);
    for (Index i = 0; i < m; ++i) y[i].imag(out[i]);
  }
}

void JosephProjector::adjoint(const VecC& y, VecC& x) const {
  RECOFOLD_CHECK(y.size() == range_size()) << "Joseph adjoint: input size " << y.size() << ", range " << range_size();
  const Index n = domain_size(), m = y.size();
  auto lease = scratch_.borrow();
  Workspace& ws = *lease;
  ws.part.resize(static_cast<size_t>(std::max(n, m)));
  ws.out.resize(static_cast<size_t>(std::max(n, m)));
  float* part = ws.part.data();
  float* out = ws.out.data();
  for (Index i = 0; i < m; ++i) part[i] = y[i].real();
  back_project_with(ws, part, out);
  x.resize(n);
  for (Index i = 0; i < n; ++i) x[i] = cfloat(out[i], 0.0f);
  bool complex_input = false;
  for (Index i = 0; i < m && !complex_input; ++i) complex_input = y[i].imag() != 0.0f;
  if (complex_input) {
    for (Index i = 0; i < m; ++i) part[i] = y[i].imag();
    back_project_with(ws, part, out);
    for (Index i = 0; i < n; ++i) x[i].imag(out[i]);
  }
}

void JosephProjector::normal(const VecC& x, VecC& result) const {
  RECOFOLD_CHECK(x.size() == domain_size()) << "Joseph normal: input size " << x.size() << ", domain " << domain_size();
  const Index n = x.size(), m = range_size();
  auto lease = scratch_.borrow();
  Workspace& ws = *lease;
  ws.part.resize(static_cast<size_t>(std::max(n, m)));
  ws.out.resize(static_cast<size_t>(std::max(n, m)));
  ws.image.resize(static_cast<size_t>(n));
  float* part = ws.part.data();
  float* sino = ws.out.data();
  float* image = ws.image.data();
  bool complex_input = false;
  for (Index i = 0; i < n && !complex_input; ++i) complex_input = x[i].imag() != 0.0f;
  for (Index i = 0; i < n; ++i) part[i] = x[i].real();
  project_with(ws, part, sino);
  back_project_with(ws, sino, image);
  // `result` may be `x`: the imaginary parts are read before they are overwritten.
  if (complex_input) {
    for (Index i = 0; i < n; ++i) part[i] = x[i].imag();
    result.resize(n);
    for (Index i = 0; i < n; ++i) result[i].real(image[i]);
    project_with(ws, part, sino);
    back_project_with(ws, sino, image);
    for (Index i = 0; i < n; ++i) result[i].imag(image[i]);
  } else {
    result.resize(n);
    for (Index i = 0; i < n; ++i) result[i] = cfloat(image[i], 0.0f);
  }
}

std::unique_ptr<JosephProjector> make_ct_operator(const Measurement& m, const std::string& file) {
  CtGeometry g = ct_geometry_from(m, file);
  const double mu = m.ct->mu_per_mm;
  if (!(mu > 0.0) || !std::isfinite(mu)) throw InputError(file, "/ct/mu_per_mm", std::to_string(mu) + "; must be > 0");
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
