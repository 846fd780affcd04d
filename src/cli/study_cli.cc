// SPDX-License-Identifier: Apache-2.0
// Running a study from the command line: signals, progress, the closing lines,
// MPI jobs (rank 0 prints) and job-array shards from the scheduler's environment.
#include "study_cli.h"

#include "output_checks_cli.h"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <thread>

#include "learn_cli.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"
#include "recofold/study/mpi_dispatch.h"
#include "recofold/study/study_config.h"
#include "recofold/study/study_runner.h"

namespace recofold::cli {

namespace {

std::atomic<bool> g_stop{false};

extern "C" void on_stop_signal(int) { g_stop.store(true); }

std::string seconds(double s) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f s", s);
  return buf;
}

// An environment variable as an integer; false when unset or not one.
bool env_int(const char* name, long& out) {
  const char* v = std::getenv(name);
  if (!v || !*v) return false;
  char* end = nullptr;
  out = std::strtol(v, &end, 10);
  return *end == '\0';
}

// The MPI job this process is a rank of (more than one process), else null.
StudyMessenger* mpi_job() {
  StudyMessenger* m = mpi_world();
  return m && m->size() > 1 ? m : nullptr;
}

// What a run needs, checked on every rank before the study starts.
struct PreparedRun {
  StudyConfig config;
  StudyRunOptions options;
  Shard shard;
};

PreparedRun prepare_run(const Context& ctx, const std::string& config_path, const std::string& out_dir, int jobs,
                        const std::string& shard_text, StudyMessenger* mpi) {
  require_writable_folder(out_dir, "--out");  // output_checks_cli.h
  if (jobs < 0) throw InputError("", "--jobs", "= " + std::to_string(jobs) + "; must be >= 1 (0: all cores)");
  if (mpi && jobs > 1)
    throw InputError("", "--jobs",
                     "= " + std::to_string(jobs) + "; in an MPI job every rank runs one case at a time: leave --jobs "
                     "out and start more ranks");
  PreparedRun p;
  p.shard = shard_text.empty() ? Shard{} : shard_text == "auto" ? shard_from_environment() : Shard::parse(shard_text, "--shard");
  install_learned_backend();  // learned methods go through it (none in a build without libtorch)
  p.config = StudyConfig::load(config_path);
  apply_threads(ctx);
  StudyRunOptions& o = p.options;
  o.out_dir = out_dir;
  const int cores = ctx.threads > 0 ? ctx.threads : std::max(1, int(std::thread::hardware_concurrency()));
  if (mpi) {
    o.jobs = 1;
    o.threads_per_job = ctx.threads > 0 ? ctx.threads : std::max(1, cores / std::max(1, mpi->ranks_on_host()));
    o.messenger = mpi;
  } else {
    o.jobs = jobs > 0 ? jobs : cores;
    o.threads_per_job = std::max(1, cores / o.jobs);
  }
  o.shard = p.shard;
  o.command = ctx.command_line;
  o.stop = &g_stop;
  return p;
}

// The closing lines of a run (rank 0 of an MPI job only).
void report_run(const Context& ctx, const StudyConfig& config, const StudyRunOptions& o, const Shard& shard,
                const StudyRunSummary& s) {
  say(ctx, "study " + config.name + ": " + std::to_string(s.cases_in_shard) + " cases" +
               (shard.count > 1 ? " in shard " + shard.to_string() + " of " + std::to_string(s.cases_total) : "") +
               ", " + std::to_string(s.cases_run) + " run" +
               (s.cases_retried ? " (" + std::to_string(s.cases_retried) + " again after output failures)" : "") + ", " +
               std::to_string(s.cases_skipped) + " already done, " + std::to_string(s.cases_failed_all) + " failed" +
               (s.cases_failed_all != s.cases_failed ? " (" + std::to_string(s.cases_failed) + " in this run)" : ""));
  // Overhead: the share of the cases' wall time (without model loading and
  // training) that the job slots (threads, or MPI ranks) did not spend reconstructing.
  const int slots = s.ranks > 1 ? s.ranks : o.jobs;
  const std::string wall = "wall " + seconds(s.wall_seconds) +
                           (s.training_seconds > 0.05 ? " (learned models " + seconds(s.training_seconds) + ")" : "");
  if (s.cases_run == 0) {
    say(ctx, wall + "; no case left to run");  // no reconstruction time to compare the wall time with
  } else {
    const double cases_wall = std::max(1e-9, s.wall_seconds - s.training_seconds);
    const double busy = s.case_seconds / (cases_wall * double(std::min(slots, s.cases_run)));
    say(ctx, wall + ", reconstruction " + seconds(s.case_seconds) + " over " + std::to_string(slots) +
                 (s.ranks > 1 ? " MPI ranks" : " job(s)") + "; overhead " +
                 std::to_string(int(std::round(100.0 * (1.0 - std::min(1.0, busy))))) + "%");
  }
  if (s.ranks > 1)
    say(ctx, "rank 0 handled " + std::to_string(s.dispatch_messages) + " messages in " +
                 std::to_string(int(std::round(1e6 * s.dispatch_seconds))) + " us");
  say(ctx, "results: " + s.results_path);
  if (!s.complete)
    throw WorkError("study stopped before every case ran (" + std::to_string(s.cases_skipped + s.cases_run) + " of " +
                    std::to_string(s.cases_in_shard) + " done); run the same command again to resume");
  say(ctx, "summary: " + s.summary_path);
  say(ctx, "report: " + s.report_path);
  say(ctx, kResearchUseLine);
}

}  // namespace

const std::vector<FieldFlag>& study_flags() {
  static const std::vector<FieldFlag> map = {{"out_dir", "--out"}, {"merge", "--merge"}, {"jobs", "--jobs"},
                                             {"shard", "--shard"}};
  return map;
}

// Job arrays: the array index and size as the common batch schedulers put
// them in each task's environment (common practice; see README "Studies on
// clusters"). Index steps other than 1 are allowed where the scheduler says
// the step.
Shard shard_from_environment() {
  long id = 0, first = 1, last = 0, count = 0, step = 1;
  const auto make = [](long index, long n, const std::string& from) {
    if (n < 1 || index < 1 || index > n)
      throw InputError("", "--shard",
                       "auto: " + from + " gives task " + std::to_string(index) + " of " + std::to_string(n) +
                           ", not a shard I/N with 1 <= I <= N");
    return Shard::parse(std::to_string(index) + "/" + std::to_string(n), "--shard");
  };
  // Slurm: sbatch --array=1-N (or 0-(N-1)).
  if (env_int("SLURM_ARRAY_TASK_ID", id) && env_int("SLURM_ARRAY_TASK_COUNT", count)) {
    env_int("SLURM_ARRAY_TASK_MIN", first);
    env_int("SLURM_ARRAY_TASK_STEP", step);
    return make((id - first) / std::max(1L, step) + 1, count, "SLURM_ARRAY_TASK_ID/_MIN/_COUNT");
  }
  // Grid Engine (SGE, UGE, OGE): qsub -t 1-N; not an array task: SGE_TASK_ID=undefined.
  if (env_int("SGE_TASK_ID", id) && env_int("SGE_TASK_FIRST", first) && env_int("SGE_TASK_LAST", last)) {
    env_int("SGE_TASK_STEPSIZE", step);
    step = std::max(1L, step);
    return make((id - first) / step + 1, (last - first) / step + 1, "SGE_TASK_ID/_FIRST/_LAST");
  }
  // PBS Pro (qsub -J 1-N) and LSF (bsub -J "name[1-N]") name only the index:
  // the count comes from RECOFOLD_SHARD_COUNT (and the first index, if not 1,
  // from RECOFOLD_SHARD_FIRST), set in the job script.
  for (const char* var : {"PBS_ARRAY_INDEX", "LSB_JOBINDEX"}) {
    if (!env_int(var, id) || (std::string(var) == "LSB_JOBINDEX" && id == 0)) continue;  // LSF: 0 outside arrays
    if (!env_int("RECOFOLD_SHARD_COUNT", count))
      throw InputError("", "--shard",
                       std::string("auto: ") + var + " is set but the number of array tasks is not; set "
                       "RECOFOLD_SHARD_COUNT=N in the job script");
    first = 1;
    env_int("RECOFOLD_SHARD_FIRST", first);
    return make(id - first + 1, count, std::string(var) + " and RECOFOLD_SHARD_COUNT");
  }
  throw InputError("", "--shard",
                   "auto: no job-array task in the environment (looked for SLURM_ARRAY_TASK_ID with "
                   "SLURM_ARRAY_TASK_COUNT, SGE_TASK_ID with SGE_TASK_FIRST/SGE_TASK_LAST, PBS_ARRAY_INDEX or "
                   "LSB_JOBINDEX with RECOFOLD_SHARD_COUNT); give --shard I/N instead");
}

std::string run_study_command(const Context& ctx, const std::string& config_path, const std::string& out_dir,
                              int jobs, const std::string& shard_text) {
  StudyMessenger* mpi = mpi_job();
  const bool rank0 = !mpi || mpi->rank() == 0;
  PreparedRun p;
  try {
    p = prepare_run(ctx, config_path, out_dir, jobs, shard_text, mpi);
  } catch (const std::exception& e) {
    // In an MPI job every rank takes part in the start, so that rank 0
    // reports (its own failure or this rank's) and every rank exits.
    const int code = dynamic_cast<const InputError*>(&e) ? 2 : 1;
    if (mpi && rank0) refuse_study_job(*mpi, code, e.what());
    if (mpi && !rank0) decline_study_job(*mpi, code, e.what());
    throw;
  }
  StudyRunOptions& o = p.options;
  const auto progress = make_progress(ctx, "study " + p.config.name);
  const auto training = make_progress(ctx, "train models of " + p.config.name);
  if (rank0) {
    o.progress = progress.get();
    o.training_progress = training.get();
  }
  g_stop.store(false);
  std::signal(SIGINT, on_stop_signal);
  std::signal(SIGTERM, on_stop_signal);
  StudyRunSummary s;
  try {
    s = run_study(p.config, o);
  } catch (const InputError& e) {
    std::signal(SIGINT, SIG_DFL);
    std::signal(SIGTERM, SIG_DFL);
    if (!e.file().empty()) throw;  // a file's own error (config, manifest, results)
    throw_with_flags(e, study_flags());
  }
  std::signal(SIGINT, SIG_DFL);
  std::signal(SIGTERM, SIG_DFL);
  if (!rank0) return "";  // rank 0 reports
  report_run(ctx, p.config, o, p.shard, s);
  return s.report_path;
}

}  // namespace recofold::cli
