// SPDX-License-Identifier: Apache-2.0
// Shared by `recofold study` and `recofold demo`: run a study config into a folder and print what happened.
#pragma once

#include <string>
#include <vector>

#include "cli_common.h"
#include "recofold/study/case_grid.h"

namespace recofold::cli {

// The study runner's option fields (out_dir, merge, jobs, shard) and their flags.
const std::vector<FieldFlag>& study_flags();

// `--shard auto`: the shard of this job-array task from the scheduler's
// environment (Slurm, Grid Engine, PBS Pro, LSF; see study_cli.cc);
// InputError naming --shard when none is found.
Shard shard_from_environment();

// Runs `config_path` into `out_dir` with `jobs` parallel cases (0: all
// cores) and shard "I/N" ("" = whole study); prints the counts, timings and
// where the report is. SIGINT/SIGTERM finish the cases in flight and stop
// (the command then fails with exit 1; a rerun resumes). Under mpirun (more
// than one process) it runs as one rank of an MPI job (mpi_dispatch.h): rank
// 0 prints, the others print nothing and return "". Returns the report path.
std::string run_study_command(const Context& ctx, const std::string& config_path, const std::string& out_dir,
                              int jobs, const std::string& shard);

}  // namespace recofold::cli
