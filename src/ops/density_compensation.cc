// SPDX-License-Identifier: Apache-2.0
// Density compensation: analytic radial ramp (angular Voronoi spacing) and Pipe–Menon iteration.
#include "recofold/ops/density_compensation.h"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"

namespace recofold {

namespace {
constexpr double kPi = 3.14159265358979323846;

}  // namespace

std::vector<float> radial_ramp_dcf(const std::vector<double>& angles, const std::vector<double>& r) {
  if (angles.empty()) throw InputError("", "angles", "no spokes");
  if (r.empty()) throw InputError("", "positions", "no samples along the spokes");
  for (size_t s = 0; s < angles.size(); ++s)
    if (!std::isfinite(angles[s])) throw InputError("", "angles", "spoke " + std::to_string(s) + " has a non-finite angle");
  for (size_t i = 0; i < r.size(); ++i) {
    if (!std::isfinite(r[i])) throw InputError("", "positions", "sample " + std::to_string(i) + " is not finite");
    if (i > 0 && !(r[i] > r[i - 1]))
      throw InputError("", "positions", "positions must increase along the spoke (sample " + std::to_string(i) + ")");
  }
  const size_t s_count = angles.size(), r_count = r.size();
  // Angular spacing: spokes are lines, so sort the angles modulo π and give
  // each half the gap to its two neighbours (cyclically over [0, π)).
  std::vector<double> mod(s_count);
  for (size_t s = 0; s < s_count; ++s) {
    double a = std::fmod(angles[s], kPi);
    if (a < 0) a += kPi;
    mod[s] = a;
  }
  std::vector<size_t> order(s_count);
  std::iota(order.begin(), order.end(), size_t{0});
  std::sort(order.begin(), order.end(), [&](size_t a, size_t b) { return mod[a] < mod[b]; });
  std::vector<double> dtheta(s_count, kPi);
  if (s_count > 1)
    for (size_t i = 0; i < s_count; ++i) {
      const double prev = mod[order[(i + s_count - 1) % s_count]] - (i == 0 ? kPi : 0.0);
      const double next = mod[order[(i + 1) % s_count]] + (i + 1 == s_count ? kPi : 0.0);
      dtheta[order[i]] = 0.5 * (next - prev);
    }
  std::vector<double> dr(r_count, 1.0);
  for (size_t i = 0; i < r_count; ++i) {
    if (r_count == 1) break;
    if (i == 0) dr[i] = r[1] - r[0];
    else if (i + 1 == r_count) dr[i] = r[i] - r[i - 1];
    else dr[i] = 0.5 * (r[i + 1] - r[i - 1]);
  }
  std::vector<float> w(s_count * r_count);
  for (size_t s = 0; s < s_count; ++s)
    for (size_t i = 0; i < r_count; ++i) {
      const double rad = std::abs(r[i]);
      // Below a quarter of the spacing the sample is the centre sample.
      const double v = rad < 0.25 * dr[i] ? dr[i] * dr[i] * dtheta[s] / 4.0 : rad * dr[i] * dtheta[s];
      w[s * r_count + i] = static_cast<float>(v);
    }
  return w;
}

std::vector<std::string> PipeMenonOptions::validate() const {
  std::vector<std::string> e;
  if (iterations < 1 || iterations > 1000)
    e.push_back("dcf.iterations = " + std::to_string(iterations) + "; must be 1..1000");
  if (!(tolerance >= 0.0) || !std::isfinite(tolerance)) e.push_back("dcf.tolerance = " + format_sig(tolerance, 6) + "; must be >= 0");
  if (kernel_width < 4 || kernel_width > 16)
    e.push_back("dcf.kernel_width = " + std::to_string(kernel_width) + "; must be 4..16");
  return e;
}

DcfResult pipe_menon_dcf(Index ny, Index nx, const VecD& kx, const VecD& ky, const PipeMenonOptions& o,
                         ProgressSink* progress) {
  const auto errors = o.validate();
  if (!errors.empty()) {
    std::string all;
    for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
    const std::string& first = errors.front();
    throw InputError("", first.substr(0, first.find(' ')), all);
  }
  NufftOptions kernel;
  kernel.oversampling = 2.0;
  kernel.width = o.kernel_width;
  const NufftPlan plan(ny, nx, kx, ky, kernel);
  const Index m = plan.points();
  DcfResult r;
  std::vector<float> w(static_cast<size_t>(m), 1.0f), c(static_cast<size_t>(m));
  for (int it = 0; it < o.iterations; ++it) {
    plan.convolve_at_points(w.data(), c.data());
    double change = 0.0;
    for (Index j = 0; j < m; ++j) {
      const float cj = c[static_cast<size_t>(j)];
      if (!(cj > 0.0f)) continue;  // cannot happen for points on the grid; keep the old weight
      const float nw = w[static_cast<size_t>(j)] / cj;
      change = std::max(change, std::abs(static_cast<double>(nw) - w[static_cast<size_t>(j)]) / std::max(1e-30f, nw));
      w[static_cast<size_t>(j)] = nw;
    }
    r.iterations = it + 1;
    r.last_change = change;
    if (progress) {
      std::ostringstream s;
      s << "change " << change;
      progress->update(it + 1, o.iterations, s.str());
    }
    if (change < o.tolerance) break;
  }
  // Scale from "C w = 1" to sample areas in (cycles per FOV)².
  const NufftKernelShape& k = plan.kernel();
  const double phi = plan.kernel_integral();
  const double scale = phi * phi * phi * phi / (k.sigma_x * k.sigma_y);
  for (auto& v : w) v = static_cast<float>(v * scale);
  r.weights = std::move(w);
  if (progress) progress->finish("density compensation: " + std::to_string(r.iterations) + " iterations");
  return r;
}

void grid_with_dcf(const NufftPlan& plan, const std::vector<float>& dcf, const cfloat* values, cfloat* image) {
  const Index m = plan.points();
  RECOFOLD_CHECK(static_cast<Index>(dcf.size()) == m) << "DCF of " << dcf.size() << " for " << m << " points";
  std::vector<cfloat> v(static_cast<size_t>(m));
  for (Index j = 0; j < m; ++j) v[static_cast<size_t>(j)] = values[j] * dcf[static_cast<size_t>(j)];
  plan.adjoint(v.data(), image);
}

}  // namespace recofold
