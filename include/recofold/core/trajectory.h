// SPDX-License-Identifier: Apache-2.0
// Non-Cartesian trajectory record: k-space coordinates, density compensation and design (file: io/trajectory_file.h).
//
// Coordinates: cycles per field of view, x to the right and y up (the
// orientation of phantom/phantom.h and ops/nufft.h), so an ny x nx image's
// Cartesian grid sits at integer k and valid points have |kx| <= nx/2,
// |ky| <= ny/2 (±0.5 cycles per pixel). Points are stored readout after
// readout: point index = readout · samples_per_readout + sample.
// sampling/trajectory.h designs them.
#pragma once

#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/types.h"

namespace recofold {

enum class TrajectoryKind {
  kRadial,        // "radial": full-diameter spokes equally spaced over 180°
  kRadialGolden,  // "radial-golden": spoke s at s·ψ, ψ the (tiny) golden angle
  kSpiral,        // "spiral": variable-density spiral interleaves under gradient limits
  kFile,          // "file": points given by the user
};

// "radial", "radial-golden", "spiral", "file" (the one string mapping, shared by CLI, TOML and files).
inline std::string_view to_string(TrajectoryKind k) {
  switch (k) {
    case TrajectoryKind::kRadial: return "radial";
    case TrajectoryKind::kRadialGolden: return "radial-golden";
    case TrajectoryKind::kSpiral: return "spiral";
    case TrajectoryKind::kFile: return "file";
  }
  return "file";
}
// Parses the designed kinds and "file".
inline std::optional<TrajectoryKind> parse_trajectory_kind(std::string_view text) {
  if (text == "radial") return TrajectoryKind::kRadial;
  if (text == "radial-golden") return TrajectoryKind::kRadialGolden;
  if (text == "spiral") return TrajectoryKind::kSpiral;
  if (text == "file") return TrajectoryKind::kFile;
  return std::nullopt;
}
// The kinds `recofold trajectory --kind` designs.
inline std::string accepted_trajectory_kinds() { return "radial, radial-golden, spiral"; }

struct Trajectory {
  TrajectoryKind kind = TrajectoryKind::kFile;
  Index ny = 0, nx = 0;
  double fov_mm = 256.0;
  VecD kx, ky;              // [M], cycles per FOV
  std::vector<float> dcf;   // [M], (cycles per FOV)² per sample (ops/density_compensation.h)
  std::string dcf_method;   // "ramp" | "pipe-menon" | "file"
  Index readouts = 1;              // spokes or interleaves (1 for user points)
  Index samples_per_readout = 0;   // M / readouts
  std::vector<double> readout_angles_rad;  // spoke angles (radial) or interleaf rotations (spiral), acquisition order
  std::vector<double> positions;           // radial: r_i along each spoke (cycles per FOV)
  // Spiral: gradient waveform of interleaf 0 on the raster, mT/m, [G, 2]
  // (gx, gy; interleaf c is it rotated by readout_angles_rad[c]), and the
  // ADC sample times of one readout (µs from the start of the waveform).
  NdArray<float> gradient_mT_per_m;
  std::vector<double> sample_time_us;
  // Design parameters and achieved values: e.g. golden_angle_deg,
  // max_gradient_mT_per_m (limit) and peak_gradient_mT_per_m (reached),
  // max_slew_T_per_m_per_s and peak_slew_T_per_m_per_s, readout_ms, kmax_cycles_per_fov.
  std::map<std::string, double> numbers;
  std::map<std::string, std::string> texts;

  Index points() const { return kx.size(); }
};

}  // namespace recofold
