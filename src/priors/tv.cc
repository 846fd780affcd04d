// SPDX-License-Identifier: Apache-2.0
// Total variation: value, analysis form and the FGP dual prox (Beck & Teboulle 2009) on fused row kernels.
#include "recofold/priors/tv.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/simd.h"
#include "recofold/core/field_error.h"
#include "recofold/priors/shrinkage.h"

namespace recofold {

// Buffers of one prox call, kept by the prior between calls (ScratchCache).
// Images are stored channel-planar: channel 0 = real parts, channel 1 =
// imaginary parts (only for complex inputs), so every row loop is a plain
// contiguous float loop the compiler vectorises.
struct TvPrior::Workspace {
  std::vector<float> v, x;     // [channels, n]: the input and the current primal image
  std::vector<float> p, r;     // [2 components, channels, n]: the dual variable and its extrapolation
  // [2, ny]: per-row ||x_k - x_{k-1}||^2 and ||x_k||^2, summed in row order
  // (independent of the thread count); two slots by iteration parity, so a
  // thread that runs ahead into the next iteration never overwrites sums that
  // another thread is still reading.
  std::vector<double> change, size;
};

namespace {

constexpr Index kParallelPixels = 65536;  // OpenMP from 256^2 up (smaller images: barriers would dominate)

// Hot row kernels: RECOFOLD_SIMD_CLONES entry points, RECOFOLD_KERNEL helpers (core/simd.h).
struct Geometry {
  Index ny, nx, n;
  int channels;
  bool periodic;
};

// The box of prox_with_box per channel: channel 0 clipped to [lo, hi],
// channel 1 zeroed (real box) or free.
struct Clip {
  bool active = false;
  float lo = 0, hi = 0;
  bool zero_imag = false;
};

RECOFOLD_KERNEL float clip(float a, float lo, float hi) { return std::min(std::max(a, lo), hi); }

// One channel of one row of the primal step x = P_C(v + theta div q), with
//   div q = q0[c] - q0u[c] + q1[c] - q1[c-1]
// (q0u the dual's previous row, or a zero contribution `fu` = 0 on the first
// Neumann row; q1[-1] = `left`). kMode: 0 = no box, 1 = clip, 2 = zero.
// Returns (||x - x_old||^2, ||x||^2) of the row when kSums.
template <int kMode, bool kSums>
RECOFOLD_KERNEL void primal_channel_row(const float* __restrict vr, const float* __restrict q0, const float* __restrict q0u,
                        const float* __restrict q1, float fu, float left, float theta, float lo, float hi, Index nx,
                        float* __restrict xr, float& change, float& size) {
  float ch = 0.0f, sz = 0.0f;
  {
    float a = vr[0] + theta * (q0[0] - fu * q0u[0] + q1[0] - left);
    if (kMode == 1) a = clip(a, lo, hi);
    if (kMode == 2) a = 0.0f;
    if (kSums) {
      const float d = a - xr[0];
      ch += d * d;
      sz += a * a;
    }
    xr[0] = a;
  }
#pragma omp simd reduction(+ : ch, sz)
  for (Index c = 1; c < nx; ++c) {
    float a = vr[c] + theta * (q0[c] - fu * q0u[c] + q1[c] - q1[c - 1]);
    if (kMode == 1) a = clip(a, lo, hi);
    if (kMode == 2) a = 0.0f;
    if (kSums) {
      const float d = a - xr[c];
      ch += d * d;
      sz += a * a;
    }
    xr[c] = a;
  }
  change = ch;
  size = sz;
}

// Primal image of row `row` from the dual q: x = P_C(v - theta D^H q),
// -D^H q = q0[r] - q0[r-1] + q1[c] - q1[c-1] (the divergence). The dual's last
// row (column) of component 0 (1) is zero under Neumann, so only the first
// row (column) needs a rule. Accumulates ||x - x_old||^2 and ||x||^2 into
// `change` and `size` when they are non-null (x holds x_old on entry).
RECOFOLD_SIMD_CLONES void primal_row(const Geometry& g, Index row, const float* v, const float* q, float theta, const Clip& box, float* x,
                double* change, double* size) {
  const Index nx = g.nx, n = g.n, cn = Index(g.channels) * n;
  const bool has_up = row > 0 || g.periodic;
  const Index up = row > 0 ? row - 1 : g.ny - 1;
  const float fu = has_up ? 1.0f : 0.0f;
  double ch = 0.0, sz = 0.0;
  for (int k = 0; k < g.channels; ++k) {
    const Index off = Index(k) * n + row * nx;
    const float* q1 = q + cn + off;
    const float left = g.periodic ? q1[nx - 1] : 0.0f;
    const int mode = !box.active ? 0 : (k == 0 ? 1 : (box.zero_imag ? 2 : 0));
    float c1 = 0.0f, s1 = 0.0f;
    const float* args_q0u = q + Index(k) * n + up * nx;
#define RECOFOLD_PRIMAL(M, S) \
  primal_channel_row<M, S>(v + off, q + off, args_q0u, q1, fu, left, theta, box.lo, box.hi, nx, x + off, c1, s1)
    if (change) {
      if (mode == 0) RECOFOLD_PRIMAL(0, true);
      else if (mode == 1) RECOFOLD_PRIMAL(1, true);
      else RECOFOLD_PRIMAL(2, true);
    } else {
      if (mode == 0) RECOFOLD_PRIMAL(0, false);
      else if (mode == 1) RECOFOLD_PRIMAL(1, false);
      else RECOFOLD_PRIMAL(2, false);
    }
#undef RECOFOLD_PRIMAL
    ch += c1;
    sz += s1;
  }
  if (change) {
    *change = ch;
    *size = sz;
  }
}

// Projection factor onto the unit ball for a squared norm m.
RECOFOLD_KERNEL float ball_scale(float m) { return 1.0f / std::sqrt(std::max(m, 1.0f)); }  // branch-free: exactly 1 inside

// Dual update of one row, one channel (real images): a = r + D x / (8 theta),
// p+ = a / max(1, |a|) (isotropic: the norm over both components;
// anisotropic: per component), r = p+ + beta (p+ - p). Columns [0, count);
// the x-difference of column c is xr[c+1] - xr[c].
template <bool kIso>
RECOFOLD_KERNEL void dual_row_real(const float* __restrict xr, const float* __restrict xd, float* __restrict p0,
                   float* __restrict p1, float* __restrict r0, float* __restrict r1, float inv_step, float beta,
                   Index count) {
#pragma omp simd
  for (Index c = 0; c < count; ++c) {
    const float a0 = r0[c] + inv_step * (xd[c] - xr[c]);
    const float a1 = r1[c] + inv_step * (xr[c + 1] - xr[c]);
    float s0, s1;
    if (kIso) {
      s0 = s1 = ball_scale(a0 * a0 + a1 * a1);
    } else {
      s0 = ball_scale(a0 * a0);
      s1 = ball_scale(a1 * a1);
    }
    const float n0 = a0 * s0, n1 = a1 * s1;
    r0[c] = n0 + beta * (n0 - p0[c]);
    r1[c] = n1 + beta * (n1 - p1[c]);
    p0[c] = n0;
    p1[c] = n1;
  }
}

// The same for complex images (channels re, im; the modulus couples them).
template <bool kIso>
RECOFOLD_KERNEL void dual_row_complex(const float* __restrict xr, const float* __restrict xi, const float* __restrict xdr,
                      const float* __restrict xdi, float* __restrict p0r, float* __restrict p0i,
                      float* __restrict p1r, float* __restrict p1i, float* __restrict r0r, float* __restrict r0i,
                      float* __restrict r1r, float* __restrict r1i, float inv_step, float beta, Index count) {
#pragma omp simd
  for (Index c = 0; c < count; ++c) {
    const float a0r = r0r[c] + inv_step * (xdr[c] - xr[c]);
    const float a0i = r0i[c] + inv_step * (xdi[c] - xi[c]);
    const float a1r = r1r[c] + inv_step * (xr[c + 1] - xr[c]);
    const float a1i = r1i[c] + inv_step * (xi[c + 1] - xi[c]);
    const float m0 = a0r * a0r + a0i * a0i, m1 = a1r * a1r + a1i * a1i;
    float s0, s1;
    if (kIso) {
      s0 = s1 = ball_scale(m0 + m1);
    } else {
      s0 = ball_scale(m0);
      s1 = ball_scale(m1);
    }
    const float n0r = a0r * s0, n0i = a0i * s0, n1r = a1r * s1, n1i = a1i * s1;
    r0r[c] = n0r + beta * (n0r - p0r[c]);
    r0i[c] = n0i + beta * (n0i - p0i[c]);
    r1r[c] = n1r + beta * (n1r - p1r[c]);
    r1i[c] = n1i + beta * (n1i - p1i[c]);
    p0r[c] = n0r;
    p0i[c] = n0i;
    p1r[c] = n1r;
    p1i[c] = n1i;
  }
}

// Dual update of row `row` (all channels). Under Neumann the last row's
// (column's) differences are zero, which the "next row = this row" pointer
// (and "next column = this column") gives for free.
template <int C, bool kIso>
RECOFOLD_KERNEL void dual_row(const Geometry& g, Index row, const float* x, float inv_step, float beta, float* p, float* r) {
  const Index nx = g.nx, n = g.n, cn = Index(C) * n;
  const Index next = row + 1 < g.ny ? row + 1 : (g.periodic ? 0 : row);
  const Index o = row * nx, od = next * nx, last = nx - 1;
  if (C == 1) {
    float* p0 = p + o;
    float* p1 = p + cn + o;
    float* r0 = r + o;
    float* r1 = r + cn + o;
    const float* xr = x + o;
    dual_row_real<kIso>(xr, x + od, p0, p1, r0, r1, inv_step, beta, last);
    // Last column: its x-difference wraps (periodic) or is zero (Neumann).
    float xl[2] = {xr[last], g.periodic ? xr[0] : xr[last]};
    dual_row_real<kIso>(xl, x + od + last, p0 + last, p1 + last, r0 + last, r1 + last, inv_step, beta, 1);
  } else {
    const float* xr = x + o;
    const float* xi = x + n + o;
    float* p0r = p + o;
    float* p0i = p + n + o;
    float* p1r = p + cn + o;
    float* p1i = p + cn + n + o;
    float* r0r = r + o;
    float* r0i = r + n + o;
    float* r1r = r + cn + o;
    float* r1i = r + cn + n + o;
    dual_row_complex<kIso>(xr, xi, x + od, x + n + od, p0r, p0i, p1r, p1i, r0r, r0i, r1r, r1i, inv_step, beta, last);
    float xl[2] = {xr[last], g.periodic ? xr[0] : xr[last]};
    float xil[2] = {xi[last], g.periodic ? xi[0] : xi[last]};
    dual_row_complex<kIso>(xl, xil, x + od + last, x + n + od + last, p0r + last, p0i + last, p1r + last, p1i + last,
                           r0r + last, r0i + last, r1r + last, r1i + last, inv_step, beta, 1);
  }
}

using DualRowFn = void (*)(const Geometry&, Index, const float*, float, float, float*, float*);

// Non-template entry points, one per (channels, form), cloned per instruction set.
#define RECOFOLD_DUAL_ENTRY(NAME, C, ISO)                                                                   \
  RECOFOLD_SIMD_CLONES void NAME(const Geometry& g, Index row, const float* x, float inv_step, float beta, \
                                 float* p, float* r) {                                                    \
    dual_row<C, ISO>(g, row, x, inv_step, beta, p, r);                                                    \
  }
RECOFOLD_DUAL_ENTRY(dual_row_real_iso, 1, true)
RECOFOLD_DUAL_ENTRY(dual_row_real_aniso, 1, false)
RECOFOLD_DUAL_ENTRY(dual_row_complex_iso, 2, true)
RECOFOLD_DUAL_ENTRY(dual_row_complex_aniso, 2, false)
#undef RECOFOLD_DUAL_ENTRY

DualRowFn pick_dual_row(int channels, bool isotropic) {
  if (channels == 1) return isotropic ? &dual_row_real_iso : &dual_row_real_aniso;
  return isotropic ? &dual_row_complex_iso : &dual_row_complex_aniso;
}

// Sum over pixels of the TV integrand of an interleaved complex image, in double.
double tv_sum(const cfloat* x, Index ny, Index nx, bool periodic, bool isotropic) {
  double total = 0.0;
  auto row_sum = [&](Index r) {
    const Index next = r + 1 < ny ? r + 1 : (periodic ? 0 : r);
    const cfloat* xr = x + r * nx;
    const cfloat* xd = x + next * nx;
    double s = 0.0;
    for (Index c = 0; c < nx; ++c) {
      const Index cr = c + 1 < nx ? c + 1 : (periodic ? 0 : c);
      const float d0r = xd[c].real() - xr[c].real(), d0i = xd[c].imag() - xr[c].imag();
      const float d1r = xr[cr].real() - xr[c].real(), d1i = xr[cr].imag() - xr[c].imag();
      const double a = double(d0r) * d0r + double(d0i) * d0i, b = double(d1r) * d1r + double(d1i) * d1i;
      s += isotropic ? std::sqrt(a + b) : std::sqrt(a) + std::sqrt(b);
    }
    return s;
  };
  // Explicit serial branch: no one-thread OpenMP regions (they allocate a team each time).
  if (ny * nx >= kParallelPixels) {
#pragma omp parallel for reduction(+ : total) schedule(static)
    for (Index r = 0; r < ny; ++r) total += row_sum(r);
  } else {
    for (Index r = 0; r < ny; ++r) total += row_sum(r);
  }
  return total;
}

}  // namespace

std::vector<std::string> TvOptions::validate() const {
  std::vector<std::string> errors;
  if (max_iterations < 1)
    errors.push_back("tv.max_iterations = " + std::to_string(max_iterations) + "; must be >= 1");
  if (!(tolerance >= 0.0) || !std::isfinite(tolerance))
    errors.push_back("tv.tolerance = " + std::to_string(tolerance) + "; must be finite and >= 0");
  return errors;
}

TvPrior::TvPrior(Shape image_shape, double weight, TvOptions options)
    : Prior(weight), shape_(std::move(image_shape)), options_(options) {
  throw_if_invalid(parse_field_messages(options_.validate()));
  if (!(weight >= 0.0) || !std::isfinite(weight))
    throw InputError("", "prior.lambda", "= " + std::to_string(weight) + "; must be finite and >= 0");
  diff_ = std::make_shared<FiniteDifference>(shape_, options_.boundary);
}

TvPrior::~TvPrior() = default;
TvPrior::TvPrior(const TvPrior&) = default;

double TvPrior::total_variation(const VecC& x) const {
  RECOFOLD_CHECK(x.size() == shape_.size()) << "TV of size " << x.size() << " for " << shape_.to_string();
  return tv_sum(x.data(), shape_[0], shape_[1], options_.boundary == DiffBoundary::kPeriodic, options_.isotropic);
}

double TvPrior::value(const VecC& x) const { return weight_ * total_variation(x); }

double TvPrior::analysis_value(const VecC& z) const {
  const Index n = shape_.size();
  double s = 0.0;
  for (Index i = 0; i < n; ++i) {
    const double a = double(z[i].real()) * z[i].real() + double(z[i].imag()) * z[i].imag();
    const double b = double(z[n + i].real()) * z[n + i].real() + double(z[n + i].imag()) * z[n + i].imag();
    s += options_.isotropic ? std::sqrt(a + b) : std::sqrt(a) + std::sqrt(b);
  }
  return weight_ * s;
}

void TvPrior::analysis_prox(const VecC& w, double step, VecC& out) const {
  const Index n = shape_.size();
  const double t = step * weight_;
  if (&out != &w) out = w;
  for (Index i = 0; i < n; ++i) {
    if (options_.isotropic) {
      group_soft_threshold(out[i], out[n + i], t);
    } else {
      out[i] = soft_threshold(out[i], t);
      out[n + i] = soft_threshold(out[n + i], t);
    }
  }
}

double TvPrior::analysis_conjugate(const VecC& q) const {
  const Index n = shape_.size();
  const double bound = weight_ * (1.0 + 1e-4) + 1e-12;
  for (Index i = 0; i < n; ++i) {
    const double a = std::norm(std::complex<double>(q[i])), b = std::norm(std::complex<double>(q[n + i]));
    const bool inside = options_.isotropic ? std::sqrt(a + b) <= bound : (std::sqrt(a) <= bound && std::sqrt(b) <= bound);
    if (!inside) return std::numeric_limits<double>::infinity();
  }
  return 0.0;
}

void TvPrior::prox(const VecC& v, double step, VecC& out) const { fgp(v, step * weight_, nullptr, out); }

bool TvPrior::prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const {
  fgp(v, step * weight_, &box, out);
  return true;
}

void TvPrior::fgp(const VecC& v_in, double theta, const Box* box, VecC& out) const {
  const Index n = shape_.size();
  RECOFOLD_CHECK(v_in.size() == n) << "TV prox input size " << v_in.size() << " for " << shape_.to_string();
  if (!(theta > 0.0)) {
    if (box)
      box->project(v_in, out);
    else if (&out != &v_in)
      out = v_in;
    return;
  }
  // A real input (and a box that keeps or zeroes imaginary parts) has a real
  // prox: the isotropic TV of a complex image couples the parts only through
  // the modulus, which a zero imaginary part leaves out. Then one channel.
  bool complex_input = false;
  for (Index i = 0; i < n && !complex_input; ++i) complex_input = v_in[i].imag() != 0.0f;
  if (box && box->real) complex_input = false;  // the box zeroes imaginary parts of every iterate
  const int channels = complex_input ? 2 : 1;
  const Geometry g{shape_[0], shape_[1], n, channels, options_.boundary == DiffBoundary::kPeriodic};
  Clip clip_box;
  if (box) {
    clip_box.active = true;
    clip_box.lo = static_cast<float>(box->lower);
    clip_box.hi = static_cast<float>(box->upper);
    clip_box.zero_imag = box->real;
  }

  auto lease = scratch_.borrow();
  Workspace& w = *lease;
  const size_t cn = static_cast<size_t>(channels * n);
  w.v.resize(cn);
  w.x.resize(cn);
  w.p.assign(2 * cn, 0.0f);
  w.r.assign(2 * cn, 0.0f);
  w.change.resize(static_cast<size_t>(2 * g.ny));
  w.size.resize(static_cast<size_t>(2 * g.ny));
  for (Index i = 0; i < n; ++i) {
    w.v[size_t(i)] = v_in[i].real();
    if (channels == 2) w.v[size_t(n + i)] = v_in[i].imag();
  }
  std::copy(w.v.begin(), w.v.end(), w.x.begin());  // x_prev of the first iteration = v (as before)

  const float* v = w.v.data();
  float* x = w.x.data();
  float* p = w.p.data();
  float* r = w.r.data();
  double* const change_slots = w.change.data();
  double* const size_slots = w.size.data();
  const float inv_step = static_cast<float>(1.0 / (8.0 * theta));
  const float th = static_cast<float>(theta);
  const bool check = options_.tolerance > 0.0;
  const double tol = options_.tolerance;
  const int iterations = options_.max_iterations;
  const DualRowFn dual = pick_dual_row(channels, options_.isotropic);
  const Index ny = g.ny;

  // One parallel region for the whole iteration: each pass is an `omp for`
  // over rows (the implicit barriers order the passes); the stopping test is
  // evaluated identically by every thread from the per-row sums.
  auto iterate = [&]() {
    double t = 1.0;
    for (int k = 0; k < iterations; ++k) {
      double* row_change = change_slots + (k & 1) * ny;
      double* row_size = size_slots + (k & 1) * ny;
#pragma omp for schedule(static)
      for (Index row = 0; row < ny; ++row)
        primal_row(g, row, v, r, th, clip_box, x, check ? row_change + row : nullptr, check ? row_size + row : nullptr);
      const double t_next = 0.5 * (1.0 + std::sqrt(1.0 + 4.0 * t * t));
      const float beta = static_cast<float>((t - 1.0) / t_next);
      t = t_next;
#pragma omp for schedule(static)
      for (Index row = 0; row < ny; ++row) dual(g, row, x, inv_step, beta, p, r);
      if (check && k > 0) {
        double ch = 0.0, sz = 0.0;
        for (Index row = 0; row < ny; ++row) {
          ch += row_change[row];
          sz += row_size[row];
        }
        if (std::sqrt(ch) <= tol * std::max(std::sqrt(sz), 1e-30)) break;
      }
    }
    // The output is the primal image of the last projected dual p.
#pragma omp for schedule(static)
    for (Index row = 0; row < ny; ++row) primal_row(g, row, v, p, th, clip_box, x, nullptr, nullptr);
  };
  // Small images run the same code on this thread alone (the `omp for`s then
  // bind to no team): an explicit branch, no one-thread OpenMP region.
  if (n >= kParallelPixels) {
#pragma omp parallel
    iterate();
  } else {
    iterate();
  }
  out.resize(n);
  if (channels == 2) {
    for (Index i = 0; i < n; ++i) out[i] = cfloat(x[i], x[n + i]);
  } else {
    // Single channel: imaginary parts are zero (real input) or zeroed by a real box.
    for (Index i = 0; i < n; ++i) out[i] = cfloat(x[i], 0.0f);
  }
}

std::string TvPrior::name() const {
  std::ostringstream s;
  s << "tv (" << (options_.isotropic ? "isotropic" : "anisotropic") << ", " << to_string(options_.boundary)
    << ") lambda " << weight_;
  return s.str();
}

}  // namespace recofold
