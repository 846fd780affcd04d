// SPDX-License-Identifier: Apache-2.0
// The trajectory file: non-Cartesian k-space coordinates, their density compensation and the design.
//
// Layout (HDF5), written by `recofold trajectory --out FILE.h5`:
//   /                               attrs research_use_only = 1, producer
//   /trajectory/k                   float32 [M, 2]: (kx, ky) per sample in cycles per field of
//                                   view, x to the right and y up (core/trajectory.h); required;
//                                   finite, |kx| <= nx/2 and |ky| <= ny/2 (±0.5 cycles per pixel)
//   /trajectory/dcf                 float32 [M]: density compensation, (cycles per FOV)² per
//                                   sample, finite and >= 0 (optional in a user's file: then
//                                   computed by Pipe–Menon iteration)
//   /trajectory                     attrs kind ("radial" | "radial-golden" | "spiral" | "file"),
//                                   image_shape int64[2] (ny, nx; optional in a user's file, then
//                                   given by the reader's caller), units = "cycles per FOV",
//                                   fov_mm, readouts, samples_per_readout (readouts ·
//                                   samples_per_readout = M), dcf_method ("ramp" | "pipe-menon" |
//                                   "file"), research_use_only = 1, and the design numbers and
//                                   texts (e.g. angle_step_deg, tiny_golden, interleaves,
//                                   max_gradient_mT_per_m, peak_gradient_mT_per_m,
//                                   max_slew_T_per_m_per_s, peak_slew_T_per_m_per_s, dwell_us,
//                                   raster_us, readout_ms, vd_edge, vd_power, kmax_cycles_per_fov)
//   /trajectory/readout_angles_rad  float64 [readouts]: spoke angles or interleaf rotations
//                                   (acquisition order; radial and spiral)
//   /trajectory/positions           float64 [samples_per_readout]: sample positions along a
//                                   spoke, cycles per FOV (radial)
//   /trajectory/gradient_mT_per_m   float32 [G, 2]: (gx, gy) of interleaf 0 on the gradient
//                                   raster, mT/m (spiral; interleaf c is it rotated by
//                                   readout_angles_rad[c])
//   /trajectory/sample_time_us      float64 [samples_per_readout]: ADC times from the start of
//                                   the waveform, µs (spiral)
//   /provenance                     attrs producer, command, created_utc, extra entries
// A user trajectory needs only /trajectory/k (h5py: f["trajectory/k"] = k.astype("float32")).
// The same group, under another root (e.g. /mri/trajectory), is how a
// measurement file carries its trajectory.
#pragma once

#include <string>

#include "recofold/core/provenance.h"
#include "recofold/core/trajectory.h"
#include "recofold/io/h5_file.h"

namespace recofold {

// Writes atomically; throws WorkError on I/O failure.
void write_trajectory_file(const std::string& path, const Trajectory& t, const Provenance& prov);

// Reads and validates a trajectory file (every field above). ny, nx: the
// image grid; 0 = from the attribute image_shape (InputError if it is missing
// then). When both are given they must agree. InputError(file, dataset, ...)
// names the problem: /trajectory/k not [M, 2], non-finite or outside the
// band; /trajectory/dcf of another length, negative or non-finite; an
// unknown kind; readouts · samples_per_readout != M. A file without
// /trajectory/dcf is returned with empty weights (the caller computes them).
Trajectory read_trajectory_file(const std::string& path, Index ny = 0, Index nx = 0);

// The group-level writer and reader behind the file (group "/trajectory",
// "/mri/trajectory", ...), for files that embed a trajectory.
void write_trajectory_group(H5Writer& w, const std::string& group, const Trajectory& t);
Trajectory read_trajectory_group(const H5Reader& r, const std::string& group, Index ny, Index nx);

// Points from a text file: one sample per line, "kx ky" or "kx ky dcf"
// (cycles per FOV; spaces, tabs or commas; '#' starts a comment; blank lines
// skipped). InputError(file, "line N", ...) on anything else; the weights are
// all present or all absent (then empty).
struct TextPoints {
  VecD kx, ky;
  std::vector<float> dcf;
};
TextPoints read_trajectory_text(const std::string& path);

}  // namespace recofold
