// SPDX-License-Identifier: Apache-2.0
// Radial (uniform, golden, tiny golden) and variable-density spiral trajectories, and user points.
#include "recofold/sampling/trajectory.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/ops/density_compensation.h"
#include "recofold/ops/nufft.h"

namespace recofold {

namespace {

constexpr double kPi = 3.14159265358979323846;

std::string fmt(double v) {
  std::ostringstream s;
  s << v;
  return s.str();
}

[[noreturn]] void throw_errors(const std::vector<std::string>& errors) {
  std::string all;
  for (const auto& e : errors) all += (all.empty() ? "" : "; ") + e;
  const std::string& first = errors.front();
  throw InputError("", first.substr(0, first.find(' ')), all);
}

// The curve, speed profile and raster waveform of one spiral interleaf.
struct SpiralDesign {
  std::vector<double> gx, gy;     // T/m on the raster
  std::vector<double> kx, ky;     // cycles/m at the raster times 0..G
  double peak_gradient = 0.0;     // T/m
  double peak_slew = 0.0;         // T/m/s
  double limit_factor = 1.0;      // fraction of the limits the passing design used
  double turns = 0.0;
};

struct SpiralCurve {
  std::vector<double> s, x, y, kappa;  // arc length, position (cycles/m), curvature (1/(cycles/m))
  double turns = 0.0;
};

SpiralCurve spiral_curve(const TrajectoryOptions& o, double kmax, double fov_m) {
  const double interleaves = o.interleaves, u = o.vd_edge, p = o.vd_power;
  // dr/dθ = c(r) = I (1 + (U - 1)(r/kmax)^p) / (2π fov)
  auto c = [&](double r) { return interleaves * (1.0 + (u - 1.0) * std::pow(r / kmax, p)) / (2.0 * kPi * fov_m); };
  auto dc = [&](double r) {
    if (r <= 0.0 || u == 1.0) return 0.0;
    return interleaves * (u - 1.0) * p * std::pow(r / kmax, p - 1.0) / (kmax * 2.0 * kPi * fov_m);
  };
  // Arc-length step: a tenth of a cycle per FOV (fine next to the raster steps).
  const double ds_target = 0.1 / fov_m;
  SpiralCurve cv;
  double r = 0.0, theta = 0.0, s = 0.0;
  auto push = [&]() {
    const double rp = c(r), rpp = dc(r) * rp;
    const double denom = std::pow(r * r + rp * rp, 1.5);
    cv.s.push_back(s);
    cv.x.push_back(r * std::cos(theta));
    cv.y.push_back(r * std::sin(theta));
    cv.kappa.push_back(std::abs(r * r + 2.0 * rp * rp - r * rpp) / denom);
  };
  push();
  while (r < kmax) {
    const double speed = std::sqrt(r * r + c(r) * c(r));  // |dk/dθ|
    // Nodes close enough that the chords between them turn by at most 0.005 rad.
    double dtheta = std::min(0.005, ds_target / speed);
    // Midpoint rule for r(θ).
    const double rm = r + 0.5 * dtheta * c(r);
    double rn = r + dtheta * c(rm);
    if (rn > kmax) {  // last step lands on k_max
      dtheta *= (kmax - r) / (rn - r);
      rn = kmax;
    }
    const double xn = rn * std::cos(theta + dtheta), yn = rn * std::sin(theta + dtheta);
    s += std::hypot(xn - cv.x.back(), yn - cv.y.back());
    r = rn;
    theta += dtheta;
    push();
  }
  cv.turns = theta / (2.0 * kPi);
  return cv;
}

// Time-optimal traversal of the curve under limits (gmax T/m, smax T/m/s),
// then the raster waveform. Returns false in `ok` if the finite-difference
// check of the raster waveform fails at these limits.
SpiralDesign traverse(const SpiralCurve& cv, double gmax, double smax, double raster_s, double check_gmax,
                      double check_smax, bool* ok) {
  const size_t n = cv.s.size();
  const double vmax = kGammaBarHzPerT * gmax, amax = kGammaBarHzPerT * smax;
  std::vector<double> vlim(n), v(n);
  for (size_t i = 0; i < n; ++i) vlim[i] = std::min(vmax, std::sqrt(amax / std::max(cv.kappa[i], 1e-300)));
  auto tangential = [&](double vi, double kappa) {
    const double an = vi * vi * kappa;
    return std::sqrt(std::max(0.0, amax * amax - an * an));
  };
  v[0] = 0.0;
  for (size_t i = 0; i + 1 < n; ++i) {
    const double ds = cv.s[i + 1] - cv.s[i];
    v[i + 1] = std::min(vlim[i + 1], std::sqrt(v[i] * v[i] + 2.0 * tangential(v[i], cv.kappa[i]) * ds));
  }
  for (size_t i = n - 1; i > 0; --i) {  // deceleration limits (rarely active: curvature falls outwards)
    const double ds = cv.s[i] - cv.s[i - 1];
    v[i - 1] = std::min(v[i - 1], std::sqrt(v[i] * v[i] + 2.0 * tangential(v[i], cv.kappa[i]) * ds));
  }
  v[0] = 0.0;
  std::vector<double> t(n, 0.0);
  for (size_t i = 0; i + 1 < n; ++i) {
    const double vm = 0.5 * (v[i] + v[i + 1]);
    t[i + 1] = t[i] + (cv.s[i + 1] - cv.s[i]) / std::max(vm, 1e-300);
  }
  // Stretch time uniformly so the curve ends on a raster time: a partial last
  // interval would drop the gradient in one step. Slowing down by T/T' <= 1
  // scales speeds by T/T' and accelerations by (T/T')², both within limits.
  const size_t g = std::max<size_t>(1, static_cast<size_t>(std::ceil(t.back() / raster_s - 1e-9)));
  const double stretch = static_cast<double>(g) * raster_s / std::max(t.back(), 1e-300);
  for (double& ti : t) ti *= stretch;
  for (double& vi : v) vi /= stretch;
  const double total = t.back();
  SpiralDesign d;
  d.kx.resize(g + 1);
  d.ky.resize(g + 1);
  size_t j = 0;
  for (size_t m = 0; m <= g; ++m) {
    const double tm = std::min(total, static_cast<double>(m) * raster_s);
    while (j + 2 < n && t[j + 1] < tm) ++j;
    // Constant acceleration within a segment: s(τ) = v_j τ + a τ² / 2, so the
    // waveform ramps from zero at the start instead of jumping.
    double f = 0.0;
    const double dt = t[j + 1] - t[j], ds = cv.s[j + 1] - cv.s[j];
    if (dt > 0 && ds > 0) {
      const double tau = std::clamp(tm - t[j], 0.0, dt);
      const double acc = (v[j + 1] - v[j]) / dt;
      f = std::clamp((v[j] * tau + 0.5 * acc * tau * tau) / ds, 0.0, 1.0);
    }
    d.kx[m] = cv.x[j] + f * (cv.x[j + 1] - cv.x[j]);
    d.ky[m] = cv.y[j] + f * (cv.y[j + 1] - cv.y[j]);
  }
  d.kx[g] = cv.x.back();
  d.ky[g] = cv.y.back();
  d.gx.resize(g);
  d.gy.resize(g);
  double pg = 0.0, ps = 0.0, prev_x = 0.0, prev_y = 0.0;
  for (size_t m = 0; m < g; ++m) {
    d.gx[m] = (d.kx[m + 1] - d.kx[m]) / (kGammaBarHzPerT * raster_s);
    d.gy[m] = (d.ky[m + 1] - d.ky[m]) / (kGammaBarHzPerT * raster_s);
    pg = std::max(pg, std::hypot(d.gx[m], d.gy[m]));
    ps = std::max(ps, std::hypot(d.gx[m] - prev_x, d.gy[m] - prev_y) / raster_s);
    prev_x = d.gx[m];
    prev_y = d.gy[m];
  }
  d.peak_gradient = pg;
  d.peak_slew = ps;
  d.turns = cv.turns;
  *ok = pg <= check_gmax && ps <= check_smax;
  return d;
}

void fill_dcf(Trajectory& t, DcfMethod method, ProgressSink* progress) {
  const bool radial = t.kind == TrajectoryKind::kRadial || t.kind == TrajectoryKind::kRadialGolden;
  if (method == DcfMethod::kAuto) method = radial ? DcfMethod::kRadialRamp : DcfMethod::kPipeMenon;
  if (method == DcfMethod::kRadialRamp) {
    if (!radial) throw InputError("", "trajectory.dcf", "'ramp' applies to radial trajectories only; use pipe-menon");
    t.dcf = radial_ramp_dcf(t.readout_angles_rad, t.positions);
    t.dcf_method = "ramp";
  } else {
    const DcfResult r = pipe_menon_dcf(t.ny, t.nx, t.kx, t.ky, PipeMenonOptions{}, progress);
    t.dcf = r.weights;
    t.dcf_method = "pipe-menon";
    t.numbers["dcf_iterations"] = r.iterations;
  }
}

}  // namespace

std::string_view to_string(DcfMethod m) {
  switch (m) {
    case DcfMethod::kAuto: return "auto";
    case DcfMethod::kRadialRamp: return "ramp";
    case DcfMethod::kPipeMenon: return "pipe-menon";
  }
  return "auto";
}

std::optional<DcfMethod> parse_dcf_method(std::string_view text) {
  if (text == "auto") return DcfMethod::kAuto;
  if (text == "ramp") return DcfMethod::kRadialRamp;
  if (text == "pipe-menon") return DcfMethod::kPipeMenon;
  return std::nullopt;
}

double tiny_golden_angle_rad(int n) {
  RECOFOLD_CHECK(n >= 1) << "tiny golden angle index " << n;
  const double tau = (1.0 + std::sqrt(5.0)) / 2.0;
  return kPi / (tau + n - 1.0);
}

std::vector<std::string> TrajectoryOptions::validate() const {
  std::vector<std::string> e;
  auto range = [&](const char* name, double v, double lo, double hi) {
    if (!(v >= lo && v <= hi)) e.push_back(std::string("trajectory.") + name + " = " + fmt(v) + "; must be in [" + fmt(lo) + ", " + fmt(hi) + "]");
  };
  if (kind == TrajectoryKind::kFile) e.push_back("trajectory.kind = file; user points come from trajectory_from_points");
  range("ny", static_cast<double>(ny), 2, 8192);
  range("nx", static_cast<double>(nx), 2, 8192);
  const bool radial = kind == TrajectoryKind::kRadial || kind == TrajectoryKind::kRadialGolden;
  if (radial) {
    range("spokes", spokes, 0, 100000);
    if (readout != 0) range("readout", readout, 2, 65536);
    range("tiny_golden", tiny_golden, 1, 20);
    if (!std::isfinite(first_angle_deg)) e.push_back("trajectory.first_angle_deg = " + fmt(first_angle_deg) + "; must be finite");
  }
  if (kind == TrajectoryKind::kSpiral) {
    range("interleaves", interleaves, 1, 1024);
    if (!(fov_mm > 0.0 && fov_mm <= 2000.0)) e.push_back("trajectory.fov_mm = " + fmt(fov_mm) + "; must be in (0, 2000]");
    if (!(max_gradient_mT_per_m > 0.0 && max_gradient_mT_per_m <= 1000.0))
      e.push_back("trajectory.max_gradient_mT_per_m = " + fmt(max_gradient_mT_per_m) + "; must be in (0, 1000]");
    if (!(max_slew_T_per_m_per_s > 0.0 && max_slew_T_per_m_per_s <= 10000.0))
      e.push_back("trajectory.max_slew_T_per_m_per_s = " + fmt(max_slew_T_per_m_per_s) + "; must be in (0, 10000]");
    range("dwell_us", dwell_us, 0.1, 100);
    range("raster_us", raster_us, 0.1, 100);
    range("vd_edge", vd_edge, 1, 16);
    range("vd_power", vd_power, 0.5, 8);
    if (dcf == DcfMethod::kRadialRamp) e.push_back("trajectory.dcf = ramp; applies to radial trajectories only");
  }
  return e;
}

namespace {
// The points and design of make_trajectory, without the density compensation.
Trajectory design_trajectory(const TrajectoryOptions& o) {
  const auto errors = o.validate();
  if (!errors.empty()) throw_errors(errors);
  Trajectory t;
  t.kind = o.kind;
  t.ny = o.ny;
  t.nx = o.nx;
  t.fov_mm = o.fov_mm;
  const Index n = std::min(o.ny, o.nx);
  if (o.kind == TrajectoryKind::kRadial || o.kind == TrajectoryKind::kRadialGolden) {
    const int spokes = o.spokes > 0 ? o.spokes : static_cast<int>(std::ceil(kPi * static_cast<double>(n) / 2.0));
    const Index readout = o.readout > 0 ? o.readout : 2 * n;
    const double step = o.kind == TrajectoryKind::kRadial ? kPi / spokes : tiny_golden_angle_rad(o.tiny_golden);
    const double first = o.first_angle_deg * kPi / 180.0;
    t.positions.resize(static_cast<size_t>(readout));
    for (Index i = 0; i < readout; ++i)
      t.positions[static_cast<size_t>(i)] = static_cast<double>(i - readout / 2) * static_cast<double>(n) / static_cast<double>(readout);
    t.readouts = spokes;
    t.samples_per_readout = readout;
    t.kx.resize(spokes * readout);
    t.ky.resize(spokes * readout);
    for (int s = 0; s < spokes; ++s) {
      const double a = std::fmod(first + s * step, 2.0 * kPi);
      t.readout_angles_rad.push_back(a < 0 ? a + 2.0 * kPi : a);
      const double ca = std::cos(a), sa = std::sin(a);
      for (Index i = 0; i < readout; ++i) {
        const double r = t.positions[static_cast<size_t>(i)];
        t.kx[s * readout + i] = r * ca;
        t.ky[s * readout + i] = r * sa;
      }
    }
    t.numbers["spokes"] = spokes;
    t.numbers["readout"] = static_cast<double>(readout);
    t.numbers["angle_step_deg"] = step * 180.0 / kPi;
    t.numbers["first_angle_deg"] = o.first_angle_deg;
    if (o.kind == TrajectoryKind::kRadialGolden) t.numbers["tiny_golden"] = o.tiny_golden;
    t.numbers["kmax_cycles_per_fov"] = 0.5 * static_cast<double>(n);
  } else {
    const double fov_m = o.fov_mm * 1e-3;
    const double kmax = static_cast<double>(n) / (2.0 * fov_m);  // cycles/m
    const double raster = o.raster_us * 1e-6, dwell = o.dwell_us * 1e-6;
    const double gmax = o.max_gradient_mT_per_m * 1e-3, smax = o.max_slew_T_per_m_per_s;
    const SpiralCurve curve = spiral_curve(o, kmax, fov_m);
    SpiralDesign d;
    bool ok = false;
    double factor = 1.0;
    for (int attempt = 0; attempt < 160 && !ok; ++attempt) {
      d = traverse(curve, gmax * factor, smax * factor, raster, gmax, smax, &ok);
      d.limit_factor = factor;
      factor *= 0.995;
    }
    if (!ok) throw WorkError("spiral design: the raster waveform exceeds the gradient limits even at 45% of them");
    // ADC samples every dwell: k is piecewise linear between raster times.
    const size_t g = d.gx.size();
    const double t_end = static_cast<double>(g) * raster;
    const Index samples = static_cast<Index>(std::floor(t_end / dwell + 1e-9)) + 1;
    std::vector<double> sx(static_cast<size_t>(samples)), sy(static_cast<size_t>(samples));
    for (Index i = 0; i < samples; ++i) {
      const double ti = std::min(t_end, static_cast<double>(i) * dwell);
      size_t m = std::min(g - 1, static_cast<size_t>(ti / raster));
      const double f = std::clamp((ti - static_cast<double>(m) * raster) / raster, 0.0, 1.0);
      sx[static_cast<size_t>(i)] = (d.kx[m] + f * (d.kx[m + 1] - d.kx[m])) * fov_m;  // cycles per FOV
      sy[static_cast<size_t>(i)] = (d.ky[m] + f * (d.ky[m + 1] - d.ky[m])) * fov_m;
      t.sample_time_us.push_back(ti * 1e6);
    }
    const double limit = 0.5 * static_cast<double>(n);
    for (Index i = 0; i < samples; ++i) {  // rounding at the very end must not leave the band
      const double r = std::hypot(sx[static_cast<size_t>(i)], sy[static_cast<size_t>(i)]);
      if (r > limit) {
        sx[static_cast<size_t>(i)] *= limit / r;
        sy[static_cast<size_t>(i)] *= limit / r;
      }
    }
    const int il = o.interleaves;
    t.readouts = il;
    t.samples_per_readout = samples;
    t.kx.resize(il * samples);
    t.ky.resize(il * samples);
    double kmax_reached = 0.0;
    for (int c = 0; c < il; ++c) {
      const double a = 2.0 * kPi * c / il;
      t.readout_angles_rad.push_back(a);
      const double ca = std::cos(a), sa = std::sin(a);
      for (Index i = 0; i < samples; ++i) {
        const double x = sx[static_cast<size_t>(i)], y = sy[static_cast<size_t>(i)];
        t.kx[c * samples + i] = ca * x - sa * y;
        t.ky[c * samples + i] = sa * x + ca * y;
        kmax_reached = std::max(kmax_reached, std::hypot(x, y));
      }
    }
    t.gradient_mT_per_m = NdArray<float>(Shape{static_cast<Index>(g), 2});
    for (size_t m = 0; m < g; ++m) {
      t.gradient_mT_per_m.data[2 * m] = static_cast<float>(d.gx[m] * 1e3);
      t.gradient_mT_per_m.data[2 * m + 1] = static_cast<float>(d.gy[m] * 1e3);
    }
    t.numbers["interleaves"] = il;
    t.numbers["fov_mm"] = o.fov_mm;
    t.numbers["max_gradient_mT_per_m"] = o.max_gradient_mT_per_m;
    t.numbers["max_slew_T_per_m_per_s"] = o.max_slew_T_per_m_per_s;
    t.numbers["peak_gradient_mT_per_m"] = d.peak_gradient * 1e3;
    t.numbers["peak_slew_T_per_m_per_s"] = d.peak_slew;
    t.numbers["design_limit_fraction"] = d.limit_factor;
    t.numbers["dwell_us"] = o.dwell_us;
    t.numbers["raster_us"] = o.raster_us;
    t.numbers["readout_ms"] = t_end * 1e3;
    t.numbers["vd_edge"] = o.vd_edge;
    t.numbers["vd_power"] = o.vd_power;
    t.numbers["turns"] = d.turns;
    t.numbers["kmax_cycles_per_fov"] = 0.5 * static_cast<double>(n);
    t.numbers["kmax_reached_cycles_per_fov"] = kmax_reached;
  }
  t.numbers["points"] = static_cast<double>(t.points());
  return t;
}
}  // namespace

Trajectory make_trajectory(const TrajectoryOptions& o, ProgressSink* progress) {
  Trajectory t = design_trajectory(o);
  fill_dcf(t, o.dcf, progress);
  return t;
}

Index trajectory_point_count(const TrajectoryOptions& o) { return design_trajectory(o).points(); }

Trajectory trajectory_from_points(Index ny, Index nx, VecD kx, VecD ky, std::vector<float> dcf, const std::string& file,
                                  ProgressSink* progress) {
  if (ny < 2 || nx < 2 || ny > 8192 || nx > 8192)
    throw InputError(file, "size", "grid " + std::to_string(ny) + "x" + std::to_string(nx) + "; each side must be 2..8192");
  check_kspace_points(kx, ky, ny, nx, file, "/trajectory/k");
  Trajectory t;
  t.kind = TrajectoryKind::kFile;
  t.ny = ny;
  t.nx = nx;
  t.kx = std::move(kx);
  t.ky = std::move(ky);
  t.readouts = 1;
  t.samples_per_readout = t.points();
  if (dcf.empty()) {
    fill_dcf(t, DcfMethod::kPipeMenon, progress);
  } else {
    if (static_cast<Index>(dcf.size()) != t.points())
      throw InputError(file, "/trajectory/dcf",
                       "has " + std::to_string(dcf.size()) + " values for " + std::to_string(t.points()) + " points");
    for (size_t j = 0; j < dcf.size(); ++j)
      if (!std::isfinite(dcf[j]) || dcf[j] < 0.0f)
        throw InputError(file, "/trajectory/dcf", "value " + std::to_string(j) + " = " + fmt(dcf[j]) + "; must be finite and >= 0");
    t.dcf = std::move(dcf);
    t.dcf_method = "file";
  }
  t.numbers["points"] = static_cast<double>(t.points());
  return t;
}

}  // namespace recofold
