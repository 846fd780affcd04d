// SPDX-License-Identifier: Apache-2.0
// Anti-aliased rasterisation: exact interior/exterior, supersampled edges, exact blob box averages.
#include "recofold/phantom/raster.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "phantom_geometry.h"

namespace recofold {

namespace {
constexpr double kPi = 3.14159265358979323846;

enum class Method { kEllipse, kBlobExact, kBlobSampled };

// A component prepared for one grid: its frame, the pixel ranges of its
// bounding box, and per-method data.
struct Prepared {
  internal::ComponentFrame f;
  Method method = Method::kEllipse;
  int col0 = 0, col1 = -1, row0 = 0, row1 = -1;  // inclusive pixel ranges
  double edge_radius = 0.0;       // ellipse: half-diagonal / min(a, b), scaled units
  int samples = 1;                // supersampling per axis
  double sx = 0.0, sy = 0.0;      // exact blob: standard deviations along x and y
  std::vector<double> col_weight;  // exact blob: box average along x per column col0..col1
  // Rotated blob: exp(-Q/2), Q = alpha px^2 + 2 beta px py + gamma py^2 in
  // offsets (px, py) from the centre; along a line of fixed py it is a 1-D
  // Gaussian in px of precision alpha, centred at -beta py / alpha.
  double alpha = 0.0, beta = 0.0, gamma = 0.0;
};

// Box average over [lo, hi] of exp(-(s - c)^2 / (2 sigma^2)), divided by the width.
double box_average_gauss(double lo, double hi, double c, double sigma) {
  const double k = 1.0 / (sigma * std::sqrt(2.0));
  return sigma * std::sqrt(kPi / 2.0) * (std::erf((hi - c) * k) - std::erf((lo - c) * k)) / (hi - lo);
}

bool prepare(const Component& comp, int ny, int nx, const RasterOptions& o, Prepared* out) {
  Prepared& p = *out;
  p.f = internal::make_frame(comp);
  const double dx = 2.0 / nx, dy = 2.0 / ny;
  const double c2 = p.f.cos_phi * p.f.cos_phi, s2 = p.f.sin_phi * p.f.sin_phi;
  double hx = std::sqrt(p.f.a * p.f.a * c2 + p.f.b * p.f.b * s2);
  double hy = std::sqrt(p.f.a * p.f.a * s2 + p.f.b * p.f.b * c2);
  if (p.f.kind == ComponentKind::kGaussian) {
    hx *= o.blob_cutoff_sigmas;
    hy *= o.blob_cutoff_sigmas;
  }
  const double cmin = std::floor((p.f.x0 - hx + 1.0) / dx), cmax = std::floor((p.f.x0 + hx + 1.0) / dx);
  const double rmin = std::floor((1.0 - (p.f.y0 + hy)) / dy), rmax = std::floor((1.0 - (p.f.y0 - hy)) / dy);
  if (cmax < 0 || cmin > nx - 1 || rmax < 0 || rmin > ny - 1) return false;
  p.col0 = static_cast<int>(std::max(0.0, cmin));
  p.col1 = static_cast<int>(std::min(nx - 1.0, cmax));
  p.row0 = static_cast<int>(std::max(0.0, rmin));
  p.row1 = static_cast<int>(std::min(ny - 1.0, rmax));

  if (p.f.kind == ComponentKind::kEllipse) {
    p.method = Method::kEllipse;
    p.edge_radius = 0.5 * std::hypot(dx, dy) / std::min(p.f.a, p.f.b);
    p.samples = o.edge_supersample;
    // An ellipse thinner (in y) than a few sub-rows would fall between them
    // or be measured coarsely: give it at least 32 sub-rows across its
    // height, up to 1024 per pixel (cheap: most sub-rows miss it at once).
    if (p.samples > 0) {
      const double needed = std::ceil(32.0 * dy / (2.0 * hy));
      p.samples = static_cast<int>(std::max(static_cast<double>(p.samples), std::min(needed, 1024.0)));
    }
    return true;
  }
  const bool axis_aligned = p.f.sin_phi == 0.0 || p.f.cos_phi == 0.0 || p.f.a == p.f.b;
  if (axis_aligned) {
    p.method = Method::kBlobExact;
    const bool swapped = p.f.cos_phi == 0.0 && p.f.a != p.f.b;
    p.sx = swapped ? p.f.b : p.f.a;
    p.sy = swapped ? p.f.a : p.f.b;
    p.col_weight.resize(static_cast<size_t>(p.col1 - p.col0 + 1));
    for (int ix = p.col0; ix <= p.col1; ++ix) {
      const double lo = -1.0 + ix * dx;
      p.col_weight[static_cast<size_t>(ix - p.col0)] = box_average_gauss(lo, lo + dx, p.f.x0, p.sx);
    }
  } else {
    p.method = Method::kBlobSampled;
    const double ia2 = 1.0 / (p.f.a * p.f.a), ib2 = 1.0 / (p.f.b * p.f.b);
    p.alpha = c2 * ia2 + s2 * ib2;
    p.beta = p.f.cos_phi * p.f.sin_phi * (ia2 - ib2);
    p.gamma = s2 * ia2 + c2 * ib2;
    // Nodes in y per pixel: enough per standard deviation of the profile along
    // y at fixed x (1/sqrt(gamma)), and at least 2 (exact for cubics).
    const double need = o.blob_samples_per_sigma * dy * std::sqrt(p.gamma);
    p.samples = static_cast<int>(std::clamp(std::ceil(need), 2.0, static_cast<double>(o.blob_max_supersample)));
  }
  return true;
}

// Fraction of the pixel centred at (x, y) covered by the ellipse: s sub-rows
// (midpoint rule in y), and on each the covered length of the pixel's x range
// computed exactly from the chord of the horizontal line through the ellipse.
// With s = 0 the pixel centre is point-sampled instead (no anti-aliasing).
double ellipse_coverage(const internal::ComponentFrame& f, double x, double y, double dx, double dy, int s) {
  if (s == 0) {
    const double px = x - f.x0, py = y - f.y0;
    const double ux = (f.cos_phi * px + f.sin_phi * py) / f.a;
    const double uy = (-f.sin_phi * px + f.cos_phi * py) / f.b;
    return ux * ux + uy * uy < 1.0 ? 1.0 : 0.0;
  }
  // Along a horizontal line, u(x) = u0 + (x - f.x0) v with v = (cos/a, -sin/b).
  const double vx = f.cos_phi / f.a, vy = -f.sin_phi / f.b;
  const double A = vx * vx + vy * vy;
  const double xl = x - 0.5 * dx - f.x0, xr = x + 0.5 * dx - f.x0;  // relative to the centre
  double covered = 0.0;
  for (int j = 0; j < s; ++j) {
    const double py = y + dy * ((j + 0.5) / s - 0.5) - f.y0;
    const double u0x = f.sin_phi * py / f.a, u0y = f.cos_phi * py / f.b;
    const double B = u0x * vx + u0y * vy;
    const double C = u0x * u0x + u0y * u0y - 1.0;
    const double disc = B * B - A * C;
    if (disc <= 0.0) continue;
    const double root = std::sqrt(disc);
    const double x1 = (-B - root) / A, x2 = (-B + root) / A;
    covered += std::max(0.0, std::min(xr, x2) - std::max(xl, x1));
  }
  return covered / (dx * s);
}

// Gauss-Legendre rule with n nodes on [-1/2, 1/2] (weights sum to 1): nodes
// are the roots of the Legendre polynomial P_n, found by Newton's method from
// the usual cosine guesses; weights 2/((1 - x^2) P_n'(x)^2), halved.
struct GaussRule {
  std::vector<double> nodes, weights;
};

GaussRule make_gauss_rule(int n) {  // n >= 2
  GaussRule r;
  r.nodes.resize(static_cast<size_t>(n));
  r.weights.resize(static_cast<size_t>(n));
  for (int i = 0; i < n; ++i) {
    double x = std::cos(kPi * (i + 0.75) / (n + 0.5));
    double dp = 1.0;
    for (int iter = 0; iter < 100; ++iter) {
      double p0 = 1.0, p1 = x;  // P_0, P_1, then the three-term recurrence
      for (int k = 2; k <= n; ++k) {
        const double p2 = ((2.0 * k - 1.0) * x * p1 - (k - 1.0) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      dp = n * (x * p1 - p0) / (x * x - 1.0);  // P_n'(x), n >= 2
      const double step = p1 / dp;
      x -= step;
      if (std::abs(step) < 1e-16) break;
    }
    r.nodes[static_cast<size_t>(i)] = 0.5 * x;
    r.weights[static_cast<size_t>(i)] = 1.0 / ((1.0 - x * x) * dp * dp);  // 2/(...) halved
  }
  return r;
}

const GaussRule& gauss_rule(int n) {
  static const std::vector<GaussRule> rules = [] {
    std::vector<GaussRule> all(65);
    all[1].nodes = {0.0};
    all[1].weights = {1.0};
    for (int k = 2; k <= 64; ++k) all[static_cast<size_t>(k)] = make_gauss_rule(k);
    return all;
  }();
  return rules[static_cast<size_t>(n)];
}

// Adds rho x (pixel averages of a rotated blob) to one row of pixels: a
// Gauss-Legendre rule over the pixel height, and on each node line the
// integral over every pixel's width: exact (erf differences at the column
// edges, shared by neighbouring pixels) for narrow profiles, a 2-node rule for
// wide ones.
void add_blob_row(const Prepared& p, double y, double dx, double dy, std::vector<double>& edges, double* acc_re,
                  double* acc_im) {
  const internal::ComponentFrame& f = p.f;
  const GaussRule& g = gauss_rule(p.samples);
  const int ncols = p.col1 - p.col0 + 1;
  edges.resize(static_cast<size_t>(ncols) + 1);
  const double k = std::sqrt(0.5 * p.alpha);
  const double norm = std::sqrt(kPi / (2.0 * p.alpha)) / dx;
  const double gamma_rest = p.gamma - p.beta * p.beta / p.alpha;  // precision of what is left in py
  // Wide along x (at least 2 pixels per standard deviation of the line
  // profile): a 2-node Gauss-Legendre rule across each pixel's width is as
  // accurate as the erf differences, and its samples, evenly spaced per node,
  // follow from one exp by the recurrence f(x+h) = f(x) r, r(x+h) = r(x) q.
  const bool wide = k * dx <= 0.35;  // 1/sqrt(alpha) >= 2 dx
  const GaussRule& gx = gauss_rule(2);
  for (int j = 0; j < p.samples; ++j) {
    const double py = y + dy * g.nodes[static_cast<size_t>(j)] - f.y0;
    const double line = g.weights[static_cast<size_t>(j)] * std::exp(-0.5 * gamma_rest * py * py);
    if (line < 1e-300) continue;
    const double centre = f.x0 - p.beta * py / p.alpha;  // line maximum, in x
    // Only columns within 6 / k of the line's maximum matter (beyond, the
    // profile is below exp(-36) and erf is +-1 to double precision).
    const double reach = 6.0 / k;
    const int e0 = std::max(0, static_cast<int>(std::floor((centre - reach + 1.0) / dx)) - p.col0);
    const int e1 = std::min(ncols, static_cast<int>(std::ceil((centre + reach + 1.0) / dx)) - p.col0);
    if (e0 >= e1) continue;
    if (wide) {
      const double q = std::exp(-2.0 * k * k * dx * dx);
      const int mid = std::clamp(static_cast<int>(std::floor((centre + 1.0) / dx)) - p.col0, e0, e1 - 1);
      for (int i = 0; i < 2; ++i) {
        const double wi = line * gx.weights[static_cast<size_t>(i)];
        const double x_mid = -1.0 + (p.col0 + mid + 0.5 + gx.nodes[static_cast<size_t>(i)]) * dx - centre;
        const double v_mid = wi * std::exp(-k * k * x_mid * x_mid);
        // Rightwards from mid, then leftwards from mid - 1.
        double v = v_mid, r = std::exp(-k * k * (2.0 * x_mid * dx + dx * dx));
        for (int c = mid; c < e1; ++c) {
          acc_re[p.col0 + c] += v * f.rho_re;
          acc_im[p.col0 + c] += v * f.rho_im;
          v *= r;
          r *= q;
        }
        r = std::exp(-k * k * (-2.0 * x_mid * dx + dx * dx));
        v = v_mid * r;
        r *= q;
        for (int c = mid - 1; c >= e0; --c) {
          acc_re[p.col0 + c] += v * f.rho_re;
          acc_im[p.col0 + c] += v * f.rho_im;
          v *= r;
          r *= q;
        }
      }
      continue;
    }
    const double amp = line * norm;
    for (int e = e0; e <= e1; ++e) edges[static_cast<size_t>(e)] = std::erf(k * (-1.0 + (p.col0 + e) * dx - centre));
    for (int c = e0; c < e1; ++c) {
      const double w = amp * (edges[static_cast<size_t>(c) + 1] - edges[static_cast<size_t>(c)]);
      acc_re[p.col0 + c] += w * f.rho_re;
      acc_im[p.col0 + c] += w * f.rho_im;
    }
  }
}

void raster_into(const Phantom& ph, int ny, int nx, const RasterOptions& o, cfloat* out, bool parallel) {
  std::vector<Prepared> comps;
  comps.reserve(ph.components.size());
  for (const Component& c : ph.components) {
    Prepared p;
    if (prepare(c, ny, nx, o, &p)) comps.push_back(std::move(p));
  }
  const double dx = 2.0 / nx, dy = 2.0 / ny;
  const bool phased = ph.phase0_rad != 0.0 || ph.phase_gx != 0.0 || ph.phase_gy != 0.0;

#pragma omp parallel for schedule(dynamic, 4) if (parallel)
  for (int iy = 0; iy < ny; ++iy) {
    std::vector<double> acc_re(static_cast<size_t>(nx), 0.0), acc_im(static_cast<size_t>(nx), 0.0);
    std::vector<double> edges;
    const double y = 1.0 - (2.0 * iy + 1.0) / ny;
    for (const Prepared& p : comps) {
      if (iy < p.row0 || iy > p.row1) continue;
      const internal::ComponentFrame& f = p.f;
      if (p.method == Method::kBlobSampled) {
        add_blob_row(p, y, dx, dy, edges, acc_re.data(), acc_im.data());
        continue;
      }
      double row_weight = 0.0;
      if (p.method == Method::kBlobExact) row_weight = box_average_gauss(y - 0.5 * dy, y + 0.5 * dy, f.y0, p.sy);
      for (int ix = p.col0; ix <= p.col1; ++ix) {
        const double x = -1.0 + (2.0 * ix + 1.0) / nx;
        double w = 0.0;
        switch (p.method) {
          case Method::kEllipse: {
            const double px = x - f.x0, py = y - f.y0;
            const double ux = (f.cos_phi * px + f.sin_phi * py) / f.a;
            const double uy = (-f.sin_phi * px + f.cos_phi * py) / f.b;
            const double q = std::sqrt(ux * ux + uy * uy);
            if (q >= 1.0 + p.edge_radius) continue;
            w = (q <= 1.0 - p.edge_radius) ? 1.0 : ellipse_coverage(f, x, y, dx, dy, p.samples);
            break;
          }
          case Method::kBlobExact:
            w = row_weight * p.col_weight[static_cast<size_t>(ix - p.col0)];
            break;
          case Method::kBlobSampled:  // handled row-wise above
            break;
        }
        acc_re[static_cast<size_t>(ix)] += w * f.rho_re;
        acc_im[static_cast<size_t>(ix)] += w * f.rho_im;
      }
    }
    cfloat* row = out + static_cast<size_t>(iy) * static_cast<size_t>(nx);
    for (int ix = 0; ix < nx; ++ix) {
      cdouble v(acc_re[static_cast<size_t>(ix)], acc_im[static_cast<size_t>(ix)]);
      if (phased) {
        const double x = -1.0 + (2.0 * ix + 1.0) / nx;
        v *= std::polar(1.0, ph.phase0_rad + 2.0 * kPi * (ph.phase_gx * x + ph.phase_gy * y));
      }
      row[ix] = cfloat(static_cast<float>(v.real()), static_cast<float>(v.imag()));
    }
  }
}

void check_grid(int ny, int nx, const RasterOptions& o) {
  RECOFOLD_CHECK(ny >= 1 && nx >= 1) << "raster grid " << ny << " x " << nx;
  const std::vector<std::string> errors = o.validate();
  RECOFOLD_CHECK(errors.empty()) << errors.front();
}
}  // namespace

std::vector<std::string> RasterOptions::validate() const {
  std::vector<std::string> errors;
  auto num = [](double v) {
    std::ostringstream s;
    s << v;
    return s.str();
  };
  if (edge_supersample < 0 || edge_supersample > 64)
    errors.push_back("raster.edge_supersample = " + std::to_string(edge_supersample) + "; must be in 0..64");
  if (!(blob_samples_per_sigma >= 1.0 && blob_samples_per_sigma <= 16.0))
    errors.push_back("raster.blob_samples_per_sigma = " + num(blob_samples_per_sigma) + "; must be in 1..16");
  if (blob_max_supersample < 1 || blob_max_supersample > 64)
    errors.push_back("raster.blob_max_supersample = " + std::to_string(blob_max_supersample) +
                     "; must be in 1..64");
  if (!(blob_cutoff_sigmas >= 3.0 && blob_cutoff_sigmas <= 40.0))
    errors.push_back("raster.blob_cutoff_sigmas = " + num(blob_cutoff_sigmas) + "; must be in 3..40");
  return errors;
}

ImageC rasterize(const Phantom& p, int ny, int nx, const RasterOptions& options) {
  check_grid(ny, nx, options);
  ImageC out(ny, nx);
  raster_into(p, ny, nx, options, out.data(), true);
  return out;
}

NdArray<cfloat> rasterize_stack(const std::vector<Phantom>& slices, int ny, int nx, const RasterOptions& options) {
  check_grid(ny, nx, options);
  const Index count = static_cast<Index>(slices.size());
  NdArray<cfloat> out(Shape{count, ny, nx});
  const size_t plane = static_cast<size_t>(ny) * static_cast<size_t>(nx);
  if (count == 1) {
    raster_into(slices[0], ny, nx, options, out.ptr(), true);
    return out;
  }
#pragma omp parallel for schedule(dynamic, 1)
  for (Index i = 0; i < count; ++i)
    raster_into(slices[static_cast<size_t>(i)], ny, nx, options, out.ptr() + static_cast<size_t>(i) * plane, false);
  return out;
}

ImageF real_part(const ImageC& image) { return image.real(); }

}  // namespace recofold
