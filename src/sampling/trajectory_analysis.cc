// SPDX-License-Identifier: Apache-2.0
// Trajectory analysis: gridded PSF, main lobe and side-lobes, sampling density profile and map, picture.
#include "recofold/sampling/trajectory_analysis.h"

#include <algorithm>
#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/ops/nufft.h"

namespace recofold {

std::string TrajectoryAnalysis::to_json() const {
  JsonObjectWriter profile;
  profile.add("radius", density_radius);
  profile.add("samples_per_cell", density);
  JsonObjectWriter w;
  w.add("ny", ny);
  w.add("nx", nx);
  w.add("points", points);
  w.add("readouts", readouts);
  w.add("samples_per_readout", samples_per_readout);
  w.add("cartesian_acceleration", cartesian_acceleration);
  w.add("kmax_reached", kmax_reached);
  w.add("dcf_area", dcf_area);
  w.add("psf_peak", psf_peak);
  w.add("main_lobe_radius_px", main_lobe_radius_px);
  w.add("psf_fwhm_px", psf_fwhm_px);
  w.add("psf_sidelobe_ratio", psf_sidelobe_ratio);
  w.add("psf_sidelobe_db", psf_sidelobe_ratio > 0 ? 20.0 * std::log10(psf_sidelobe_ratio) : -INFINITY);
  w.add("psf_sidelobe_offset", std::vector<Index>{psf_sidelobe_dy, psf_sidelobe_dx});
  w.add("density_profile", profile);
  return w.str();
}

TrajectoryAnalysis analyse_trajectory(const Trajectory& t, const TrajectoryAnalysisOptions& o) {
  RECOFOLD_CHECK(t.points() > 0 && static_cast<Index>(t.dcf.size()) == t.points())
      << "trajectory with " << t.points() << " points and " << t.dcf.size() << " weights";
  RECOFOLD_CHECK(o.density_bins >= 4 && o.density_bins <= 1024) << "density_bins " << o.density_bins;
  TrajectoryAnalysis a;
  const Index ny = t.ny, nx = t.nx, n = ny * nx, m = t.points();
  a.ny = ny;
  a.nx = nx;
  a.points = m;
  a.readouts = t.readouts;
  a.samples_per_readout = t.samples_per_readout;
  a.cartesian_acceleration = static_cast<double>(n) / static_cast<double>(m);
  for (Index j = 0; j < m; ++j) {
    a.kmax_reached = std::max(a.kmax_reached, std::hypot(t.kx[j], t.ky[j]));
    a.dcf_area += t.dcf[static_cast<size_t>(j)];
  }

  NufftOptions no;
  no.epsilon = o.nufft_epsilon;
  const NufftPlan plan(ny, nx, t.kx, t.ky, no);
  std::vector<cfloat> y(static_cast<size_t>(m)), img(static_cast<size_t>(n));
  const float scale = static_cast<float>(1.0 / std::sqrt(static_cast<double>(n)));
  for (Index j = 0; j < m; ++j) y[static_cast<size_t>(j)] = cfloat(t.dcf[static_cast<size_t>(j)] * scale, 0.0f);
  plan.adjoint(y.data(), img.data());
  const Index cy = ny / 2, cx = nx / 2;
  a.psf_peak = std::abs(img[static_cast<size_t>(cy * nx + cx)]);
  const double peak = a.psf_peak > 0 ? a.psf_peak : 1.0;
  a.psf_magnitude = ImageF(ny, nx);
  for (Index i = 0; i < n; ++i) a.psf_magnitude.data()[i] = static_cast<float>(std::abs(img[static_cast<size_t>(i)]) / peak);

  // Azimuthal mean of |psf| in half-pixel rings; the main lobe ends at its first minimum.
  const Index rings = static_cast<Index>(std::ceil(std::hypot(ny, nx))) + 2;
  std::vector<double> sum(static_cast<size_t>(rings), 0.0), count(static_cast<size_t>(rings), 0.0);
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      const Index b = static_cast<Index>(std::floor(2.0 * std::hypot(iy - cy, ix - cx) + 0.5));
      if (b >= rings) continue;
      sum[static_cast<size_t>(b)] += a.psf_magnitude(iy, ix);
      count[static_cast<size_t>(b)] += 1.0;
    }
  std::vector<double> prof, prof_r;  // non-empty rings only
  for (Index b = 0; b < rings; ++b)
    if (count[static_cast<size_t>(b)] > 0) {
      prof.push_back(sum[static_cast<size_t>(b)] / count[static_cast<size_t>(b)]);
      prof_r.push_back(0.5 * static_cast<double>(b));
    }
  size_t first_min = prof.size() > 1 ? prof.size() - 1 : 0;
  for (size_t b = 1; b + 1 < prof.size(); ++b)
    if (prof[b] <= prof[b - 1] && prof[b] < prof[b + 1]) {
      first_min = b;
      break;
    }
  a.main_lobe_radius_px = prof_r.empty() ? 0.0 : prof_r[first_min];
  for (size_t b = 1; b < prof.size(); ++b)
    if (prof[b] < 0.5) {  // linear interpolation of the half-maximum crossing
      const double f = (prof[b - 1] - 0.5) / std::max(1e-300, prof[b - 1] - prof[b]);
      a.psf_fwhm_px = 2.0 * (prof_r[b - 1] + f * (prof_r[b] - prof_r[b - 1]));
      break;
    }
  double worst = 0.0;
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      if (std::hypot(iy - cy, ix - cx) <= a.main_lobe_radius_px + 1e-9) continue;
      const double v = a.psf_magnitude(iy, ix);
      if (v > worst) {
        worst = v;
        a.psf_sidelobe_dy = iy - cy;
        a.psf_sidelobe_dx = ix - cx;
      }
    }
  a.psf_sidelobe_ratio = worst;

  // Density: samples per unit area in annuli, and a histogram over Cartesian cells.
  const int bins = o.density_bins;
  const double rmax = std::max(a.kmax_reached, 1e-9) * (1.0 + 1e-9);
  std::vector<double> hist(static_cast<size_t>(bins), 0.0);
  a.density_map = ImageF::Zero(ny, nx);
  for (Index j = 0; j < m; ++j) {
    const double r = std::hypot(t.kx[j], t.ky[j]);
    hist[static_cast<size_t>(std::min<Index>(bins - 1, static_cast<Index>(r / rmax * bins)))] += 1.0;
    const Index u = std::clamp<Index>(static_cast<Index>(std::lround(-t.ky[j])) + ny / 2, 0, ny - 1);
    const Index v = std::clamp<Index>(static_cast<Index>(std::lround(t.kx[j])) + nx / 2, 0, nx - 1);
    a.density_map(u, v) += 1.0f;
  }
  constexpr double kPi = 3.14159265358979323846;
  for (int b = 0; b < bins; ++b) {
    const double r0 = rmax * b / bins, r1 = rmax * (b + 1) / bins;
    a.density_radius.push_back(0.5 * (r0 + r1));
    a.density.push_back(hist[static_cast<size_t>(b)] / (kPi * (r1 * r1 - r0 * r0)));
  }
  return a;
}

ImageF trajectory_picture(const TrajectoryAnalysis& a, double floor_db) {
  const Index ny = a.ny, nx = a.nx, bar = 4;
  ImageF pic = ImageF::Constant(ny, 2 * nx + bar, 0.5f);
  for (Index iy = 0; iy < ny; ++iy)
    for (Index ix = 0; ix < nx; ++ix) {
      const double c = a.density_map(iy, ix);
      pic(iy, ix) = c > 0 ? static_cast<float>(std::clamp((std::log10(c) + 1.0) / 3.0, 0.02, 1.0)) : 0.0f;
      const double v = a.psf_magnitude(iy, ix);
      const double db = v > 0 ? 20.0 * std::log10(v) : floor_db;
      pic(iy, nx + bar + ix) = static_cast<float>(std::clamp(1.0 - db / floor_db, 0.0, 1.0));
    }
  return pic;
}

}  // namespace recofold
