// SPDX-License-Identifier: Apache-2.0
// Running a study from the command line: signals, progress, the closing lines.
#include "study_cli.h"

#include "output_checks_cli.h"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <csignal>
#include <cstdio>
#include <thread>

#include "learn_cli.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"
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

}  // namespace

const std::vector<FieldFlag>& study_flags() {
  static const std::vector<FieldFlag> map = {{"out_dir", "--out"}, {"merge", "--merge"}, {"jobs", "--jobs"},
                                             {"shard", "--shard"}};
  return map;
}

std::string run_study_command(const Context& ctx, const std::string& config_path, const std::string& out_dir,
                              int jobs, const std::string& shard_text) {
  require_writable_folder(out_dir, "--out");  // output_checks_cli.h
  if (jobs < 0) throw InputError("", "--jobs", "= " + std::to_string(jobs) + "; must be >= 1 (0: all cores)");
  const Shard shard = shard_text.empty() ? Shard{} : Shard::parse(shard_text, "--shard");
  install_learned_backend();  // learned methods go through it (none in a build without libtorch)
  const StudyConfig config = StudyConfig::load(config_path);
  apply_threads(ctx);
  StudyRunOptions o;
  o.out_dir = out_dir;
  const int cores = ctx.threads > 0 ? ctx.threads : std::max(1, int(std::thread::hardware_concurrency()));
  o.jobs = jobs > 0 ? jobs : cores;
  o.threads_per_job = std::max(1, cores / o.jobs);
  o.shard = shard;
  o.command = ctx.command_line;
  o.stop = &g_stop;
  const auto progress = make_progress(ctx, "study " + config.name);
  o.progress = progress.get();
  const auto training = make_progress(ctx, "train models of " + config.name);
  o.training_progress = training.get();
  g_stop.store(false);
  std::signal(SIGINT, on_stop_signal);
  std::signal(SIGTERM, on_stop_signal);
  StudyRunSummary s;
  try {
    s = run_study(config, o);
  } catch (const InputError& e) {
    std::signal(SIGINT, SIG_DFL);
    std::signal(SIGTERM, SIG_DFL);
    if (!e.file().empty()) throw;  // a file's own error (config, manifest, results)
    throw_with_flags(e, study_flags());
  }
  std::signal(SIGINT, SIG_DFL);
  std::signal(SIGTERM, SIG_DFL);
  say(ctx, "study " + config.name + ": " + std::to_string(s.cases_in_shard) + " cases" +
               (shard.count > 1 ? " in shard " + shard.to_string() + " of " + std::to_string(s.cases_total) : "") +
               ", " + std::to_string(s.cases_run) + " run" +
               (s.cases_retried ? " (" + std::to_string(s.cases_retried) + " again after output failures)" : "") + ", " +
               std::to_string(s.cases_skipped) + " already done, " + std::to_string(s.cases_failed_all) + " failed" +
               (s.cases_failed_all != s.cases_failed ? " (" + std::to_string(s.cases_failed) + " in this run)" : ""));
  // Overhead: the share of the cases' wall time (without model loading and
  // training) that the job slots did not spend reconstructing.
  const double cases_wall = std::max(1e-9, s.wall_seconds - s.training_seconds);
  const double busy = s.case_seconds / (cases_wall * double(std::min(o.jobs, std::max(1, s.cases_run))));
  say(ctx, "wall " + seconds(s.wall_seconds) +
               (s.training_seconds > 0.05 ? " (learned models " + seconds(s.training_seconds) + ")" : "") +
               ", reconstruction " + seconds(s.case_seconds) + " over " + std::to_string(o.jobs) +
               " job(s); overhead " + std::to_string(int(std::round(100.0 * (1.0 - std::min(1.0, busy))))) + "%");
  say(ctx, "results: " + s.results_path);
  if (!s.complete)
    throw WorkError("study stopped before every case ran (" + std::to_string(s.cases_skipped + s.cases_run) + " of " +
                    std::to_string(s.cases_in_shard) + " done); run the same command again to resume");
  say(ctx, "summary: " + s.summary_path);
  say(ctx, "report: " + s.report_path);
  say(ctx, kResearchUseLine);
  return s.report_path;
}

}  // namespace recofold::cli
