// SPDX-License-Identifier: Apache-2.0
// Trajectory parts of the CLI shared by `trajectory`, `simulate` and `recon`: loading, flag names, report.
#pragma once

#include <string>

#include "recofold/core/progress.h"
#include "recofold/core/trajectory.h"
#include "recofold/sampling/trajectory_analysis.h"

namespace recofold::cli {

// Reads a trajectory for `flag` (e.g. "--trajectory"): a trajectory file
// (.h5, io/trajectory_file.h) or a text file of points (.txt, .csv: "kx ky
// [dcf]" per line). ny, nx: the grid (0 = from the file; a text file needs
// it). Missing weights are computed by Pipe–Menon iteration. InputError
// names the file and dataset or line.
Trajectory load_trajectory(const std::string& path, const std::string& flag, Index ny, Index nx,
                           ProgressSink* progress = nullptr);

// Rewrites an InputError from the trajectory library ("trajectory.spokes =
// ...") with the flag that sets the field ("--spokes"), and rethrows.
[[noreturn]] void rethrow_with_trajectory_flags(const std::exception_ptr& error);

// The JSON report of `trajectory --report`: kind, dcf_method, the design
// numbers, the analysis (sampling/trajectory_analysis.h) and research_use_only.
std::string trajectory_report_json(const Trajectory& t, const TrajectoryAnalysis& a);

// One line: "radial-golden 256x256: 64 readouts x 512 samples (32768 points, Cartesian-equivalent R 2.00),
// k-max 128.0, PSF side-lobe -21.4 dB, main lobe 1.5 px, dcf ramp".
std::string trajectory_summary(const Trajectory& t, const TrajectoryAnalysis& a);

}  // namespace recofold::cli
