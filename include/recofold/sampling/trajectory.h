// SPDX-License-Identifier: Apache-2.0
// Non-Cartesian k-space trajectories kept as coordinates: radial (uniform, golden and tiny golden angle),
// variable-density spiral interleaves designed under gradient hardware limits, and user-given points.
//
// The record (coordinates, weights, design) is core/trajectory.h; its file is io/trajectory_file.h.
#pragma once

#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/core/trajectory.h"
#include "recofold/core/types.h"

namespace recofold {

// Tiny golden angles (Wundrak et al., MRM 75, 2016): ψ_N = π / (τ + N - 1),
// τ = (1 + √5)/2, for full-diameter spokes. N = 1 is the golden angle
// 180°/τ ≈ 111.246° (Winkelmann et al., IEEE TMI 26, 2007); N = 2: 68.75°,
// 5: 32.04°, 7: 23.63°. N >= 1 (checked).
double tiny_golden_angle_rad(int n);

// How the density compensation weights are made.
enum class DcfMethod {
  kAuto,        // "auto": ramp for radial, Pipe–Menon otherwise
  kRadialRamp,  // "ramp": analytic (ops/density_compensation.h radial_ramp_dcf); radial only
  kPipeMenon,   // "pipe-menon": iterative, any trajectory
};
std::string_view to_string(DcfMethod m);
std::optional<DcfMethod> parse_dcf_method(std::string_view text);

struct TrajectoryOptions {
  TrajectoryKind kind = TrajectoryKind::kRadialGolden;
  Index ny = 256, nx = 256;  // image grid (2..8192 each); k-max = min(ny, nx)/2 cycles per FOV
  DcfMethod dcf = DcfMethod::kAuto;

  // Radial. Spokes of `readout` samples at positions r_i = (i - R/2) · n/R,
  // i = 0..R-1, n = min(ny, nx): from -n/2 to just below n/2, through k = 0.
  int spokes = 0;        // 1..100000; 0 = ceil(π n / 2), the angularly fully sampled count
  int readout = 0;       // samples per spoke, 2..65536; 0 = 2n (2x readout oversampling, common practice)
  int tiny_golden = 1;   // radial-golden: the N of ψ_N (1 = the golden angle), 1..20
  double first_angle_deg = 0.0;  // angle of spoke 0 (degrees, counter-clockwise from +kx)

  // Spiral (Archimedean in the uniform case; design below). The defaults are
  // common practice for a clinical 1.5/3 T system.
  int interleaves = 16;                 // 1..1024, rotated by 360°/I
  double fov_mm = 256.0;                // field of view (0 < fov <= 2000 mm)
  double max_gradient_mT_per_m = 40.0;  // hardware gradient limit (common practice 20..80), > 0
  double max_slew_T_per_m_per_s = 150.0;  // slew-rate limit (common practice 100..200), > 0
  double dwell_us = 2.0;                // ADC sample spacing (common practice 1..4 µs), 0.1..100
  double raster_us = 4.0;               // gradient raster time (common practice 4..10 µs), 0.1..100
  // Variable density: the design field of view falls from fov_mm at the
  // centre to fov_mm / vd_edge at k-max,
  //   FOV(k) = fov_mm / (1 + (vd_edge - 1) (|k| / k_max)^vd_power),
  // so the outer k-space is vd_edge times sparser (1 = uniform density).
  double vd_edge = 1.0;   // 1..16
  double vd_power = 2.0;  // 0.5..8

  // Every violation as "trajectory.<field> = value; rule"; empty means valid.
  std::vector<std::string> validate() const;
};

// Designs a trajectory (options checked: InputError naming "trajectory.<field>").
// Spiral design (Glover, MRM 42, 1999, for the variable-density spiral;
// time-optimal traversal of a fixed curve as in Lustig, Kim & Pauly, IEEE
// TMI 27, 2008; both written from memory):
//   1. the curve: k(θ) = r(θ) e^{iθ} with dr/dθ = I / (2π FOV(r)), so that
//      adjacent interleaves are 1/FOV(r) apart (Nyquist for FOV(r)), from
//      r = 0 to k_max = n / (2 fov) (cycles/mm);
//   2. the speed along the curve's arc length s, v = |dk/dt| = γ̄ |g|: the
//      largest profile with v <= γ̄ G_max, centripetal v² κ <= γ̄ S_max and
//      tangential dv/dt <= sqrt((γ̄ S_max)² - (v² κ)²), from v = 0 (the
//      gradient starts at zero); γ̄ = 42.577478 MHz/T;
//   3. the gradient on the raster: constant over each raster interval and
//      equal to the k-space step over that interval / (γ̄ Δt), so k is exact
//      at raster times and piecewise linear between them; ADC samples every
//      dwell up to the end of the curve.
//   The discrete waveform is checked against both limits by finite
//   differences (|g[n]| <= G_max, |g[n] - g[n-1]| / Δt <= S_max, from and
//   including g[-1] = 0); if the discretisation overshoots, the design is
//   repeated with the limits lowered by 0.5% at a time until it passes
//   (typically one or two steps: the finite-difference slew of a turning
//   gradient overshoots the continuous one by a fraction of a percent). The ramp-down
//   and rewinder after the readout are not part of the design.
// `progress` (may be null) reports Pipe–Menon iterations.
Trajectory make_trajectory(const TrajectoryOptions& options, ProgressSink* progress = nullptr);

// The number of points M make_trajectory(options) has, without computing its
// density compensation (options checked as there).
Index trajectory_point_count(const TrajectoryOptions& options);

// A trajectory from user points (cycles per FOV) for an ny x nx grid:
// checked like every NUFFT input (finite, within ±0.5 cycles per pixel:
// InputError(file, "/trajectory/k", ...)); `dcf` empty = Pipe–Menon weights,
// otherwise it must have M finite values >= 0 (InputError(file, "/trajectory/dcf")).
Trajectory trajectory_from_points(Index ny, Index nx, VecD kx, VecD ky, std::vector<float> dcf,
                                  const std::string& file = "", ProgressSink* progress = nullptr);

// Gyromagnetic ratio of 1H over 2π, Hz/T.
constexpr double kGammaBarHzPerT = 42.577478e6;

}  // namespace recofold
