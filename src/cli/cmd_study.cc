// SPDX-License-Identifier: Apache-2.0
// `recofold study`: run a config-driven study (parallel, sharded, resumable) or merge shard folders.
#include <memory>
#include <string>
#include <vector>

#include "cli_common.h"
#include "learn_cli.h"
#include "output_checks_cli.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"
#include "recofold/study/mpi_dispatch.h"
#include "recofold/study/study_runner.h"
#include "study_cli.h"

namespace recofold::cli {

namespace {

struct StudyFlags {
  std::string config, out, shard;
  int jobs = 0;
  std::vector<std::string> merge;
};

void run(const StudyFlags& f, const Context& ctx) {
  if (!f.merge.empty()) {
    if (const StudyMessenger* mpi = mpi_world(); mpi && mpi->size() > 1) {
      if (mpi->rank() != 0) throw ReportedByRankZero(2, "");  // rank 0 says it, once
      throw InputError("", "--merge", "runs in one process: start it without mpirun");
    }
    if (!f.config.empty()) throw InputError("", "--merge", "give either --config or --merge, not both");
    require_writable_folder(f.out, "--out");  // output_checks_cli.h
    install_learned_backend();  // the merged config may name learned methods
    StudyRunSummary s;
    try {
      s = merge_studies(f.merge, f.out, ctx.command_line);
    } catch (const InputError& e) {
      if (!e.file().empty()) throw;  // a file's own error (config, manifest, results)
      throw_with_flags(e, study_flags());
    }
    say(ctx, "merged " + std::to_string(f.merge.size()) + " folders: " + std::to_string(s.cases_skipped) + " of " +
                 std::to_string(s.cases_total) + " cases" + (s.complete ? "" : " (incomplete: some shards missing)"));
    say(ctx, "results: " + s.results_path);
    say(ctx, "summary: " + s.summary_path);
    say(ctx, "report: " + s.report_path);
    say(ctx, kResearchUseLine);
    return;
  }
  if (f.config.empty()) throw InputError("", "--config", "a study config is required (or --merge DIR...)");
  run_study_command(ctx, f.config, f.out, f.jobs, f.shard);
}

}  // namespace

void register_cmd_study(CLI::App& app, Context& ctx) {
  auto flags = std::make_shared<StudyFlags>();
  CLI::App* sub = app.add_subcommand(
      "study", "Run a study: phantoms x acquisitions x methods x repetitions, with results table and report");
  sub->add_option("--config", flags->config, "Study config (TOML; see configs/study-example.toml)");
  sub->add_option("--out", flags->out, "Output folder (created; a rerun into it resumes)");
  sub->add_option("--jobs", flags->jobs, "Cases run in parallel (default 0: all cores)");
  sub->add_option("--shard", flags->shard,
                  "Run shard I of N (I/N) of the cases, e.g. 2/4; 'auto': from the job-array task of the batch "
                  "scheduler (Slurm, Grid Engine, PBS Pro, LSF; see README)");
  sub->add_option("--merge", flags->merge, "Merge these shard folders into --out")->expected(1, -1);
  sub->footer("Writes results.csv (one row per case, as cases finish; lambda_rule says how each weight was chosen:\n"
              "auto, fixed, or oracle = best PSNR against the truth, which no real scan allows), summary.csv\n"
              "(n, mean, std, 95 % t interval), comparisons.csv (paired differences with intervals and Wilcoxon\n"
              "p-values) and report.html (findings first).\n"
              "On clusters: 'mpirun -np N recofold study ...' runs one study over N MPI ranks (rank 0 hands out\n"
              "the cases and writes the tables; leave --jobs out), '--shard auto' runs one task of a job array\n"
              "(then --merge the task folders). Either way the --out folder must be on a filesystem every\n"
              "rank or task sees (shared, e.g. NFS or Lustre); MPI jobs check it with a probe file.\n" +
              std::string(kResearchUseLine));
  sub->callback([flags, &ctx] { run(*flags, ctx); });
}

}  // namespace recofold::cli
