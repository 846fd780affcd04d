// SPDX-License-Identifier: Apache-2.0
// Running a study (parallel, resumable, sharded) and merging shards into one result folder.
//
// Output folder layout:
//   study.toml      the config text
//   manifest.json   name, config hash, shard, case counts, producer, command
//   study.lock      present while a run holds the folder (folder_lock.h)
//   results.csv     one row per case (results_table.h), appended as each case
//                   finishes; rewritten in canonical case order when the run
//                   (or shard) is complete
//   summary.csv     mean +- std per method and condition (summary.h)
//   report.html     self-contained report (report.h); figures/ holds its plots
//                   (SVG) and montages (PNG)
//   images/         reconstructions of the montage cases (first phantom, first
//                   repetition) and their truths, recofold image files (.h5)
//   models/         models trained inside the study ([train] methods)
#pragma once

#include <atomic>
#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/study/case_grid.h"
#include "recofold/study/mpi_dispatch.h"
#include "recofold/study/study_config.h"

namespace recofold {

struct StudyRunOptions {
  std::string out_dir;          // created if missing (its parent must exist)
  int jobs = 1;                 // cases run side by side, >= 1
  // OpenMP/FFTW threads per job; 0 = max(1, cores / jobs).
  int threads_per_job = 0;
  Shard shard;                  // default 1/1: the whole study
  ProgressSink* progress = nullptr;         // cases done / total; may be null
  ProgressSink* training_progress = nullptr;  // training of [train] methods; null: use `progress`
  const std::atomic<bool>* stop = nullptr;  // set: finish cases in flight, start no new ones
  std::string command;          // for provenance (manifest)
  bool write_report = true;     // summary.csv and report.html when complete
  // Hold the folder's lock (folder_lock.h) for the run; false only when the
  // caller holds the StudyFolderLock of out_dir itself.
  bool lock = true;
  // Set (size > 1): this process is one rank of an MPI job (mpi_dispatch.h).
  // Rank 0 checks and prepares the folder, trains learned models, hands the
  // pending cases out one at a time and alone writes results.csv and the
  // final outputs; every rank (rank 0 on a second thread) runs cases and
  // writes their images into the folder, which must be shared by all ranks
  // (checked with a probe file: InputError on out_dir otherwise). jobs must
  // be 1; threads_per_job applies to every rank. Progress goes to rank 0's
  // `progress` only.
  StudyMessenger* messenger = nullptr;
  std::vector<std::string> validate() const;  // "jobs = 0; must be >= 1"
};

struct StudyRunSummary {
  int cases_total = 0;     // in the whole grid
  int cases_in_shard = 0;
  int cases_skipped = 0;   // already in results.csv (resume)
  int cases_run = 0;
  int cases_failed = 0;    // run here and failed (error in their rows)
  int cases_failed_all = 0;  // cases of the shard whose rows hold an error, earlier runs included
  int cases_retried = 0;   // rows of earlier runs whose outputs failed (disk full...), dropped to run again
  bool complete = false;   // every case of the shard has a row
  double wall_seconds = 0.0;
  double case_seconds = 0.0;  // sum of the reconstruction times of the cases run here
  double training_seconds = 0.0;  // loading and training learned models (part of wall_seconds)
  std::string results_path, summary_path, report_path;
  int ranks = 1;                  // processes of the MPI job (1: none)
  double dispatch_seconds = 0.0;  // rank 0 of an MPI job: time spent handling messages (rows, task requests)
  int dispatch_messages = 0;      // rank 0: messages handled
};

// Runs the (shard of the) study into options.out_dir, skipping cases whose
// rows are already there. Refuses (InputError, nothing written) an output
// folder that holds a different config or another shard, whose manifest is
// corrupt, or that another run holds (folder_lock.h). Failing cases are
// recorded in their rows and do not stop the study; rows of cases whose
// outputs could not be written (is_output_failure) are run again on resume.
// In an MPI job (options.messenger) every rank calls it with the same config
// and options; a rank other than 0 whose run rank 0 refused or stopped gets
// ReportedByRankZero (rank 0 has the error), and returns only its own counts.
StudyRunSummary run_study(const StudyConfig& config, const StudyRunOptions& options);

// For an MPI job whose command failed before run_study: rank 0 tells the
// other ranks (they get ReportedByRankZero) ...
void refuse_study_job(StudyMessenger& messenger, int exit_code, const std::string& message);
// ... and any other rank hands its failure to rank 0, which reports it (or
// its own). Always throws ReportedByRankZero.
[[noreturn]] void decline_study_job(StudyMessenger& messenger, int exit_code, const std::string& message);

// Combines shard folders into `out_dir`: every folder must hold the same
// config (same hash) and no case may appear twice; the merged results.csv is
// in canonical order, equal to an unsharded run's apart from the time column.
// InputError (naming the folder) otherwise; nothing is written then.
StudyRunSummary merge_studies(const std::vector<std::string>& dirs, const std::string& out_dir,
                              const std::string& command);

}  // namespace recofold
