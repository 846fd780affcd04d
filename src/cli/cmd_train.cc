// SPDX-License-Identifier: Apache-2.0
// `recofold train`: train a learned unrolled model from a config; checkpoints on SIGINT/SIGTERM, --resume.
#include <atomic>
#include <csignal>
#include <cstdio>
#include <iostream>
#include <memory>
#include <string>

#include "cli_common.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "learn_cli.h"
#include "recofold/recon/learned_backend.h"

namespace recofold::cli {

namespace {

std::atomic<bool> g_stop_training{false};

extern "C" void request_stop(int) { g_stop_training.store(true); }

struct TrainFlags {
  std::string config, out;
  bool resume = false, restart = false;
};

// The learned backend (the learn module, loaded at run time), or a refusal.
const LearnedBackend& learn_backend() {
  install_learned_backend();
  const LearnedBackendLookup found = find_learned_backend();
  if (!found.backend) throw InputError("", "train", found.reason);
  return *found.backend;
}

void run_train(const TrainFlags& f, const Context& ctx) {
  require_output_path(f.out, "--out", {".h5"});
  const LearnedBackend& backend = learn_backend();
  const LearnedTrainingPlan plan = backend.inspect_training(f.config);
  // An earlier run's checkpoint is never overwritten silently.
  const std::string checkpoint = backend.checkpoint_file(f.out);
  if (f.resume && f.restart) throw InputError("", "--restart", "give either --resume or --restart, not both");
  if (file_exists(checkpoint) && !f.resume && !f.restart)
    throw InputError(checkpoint, "--out", "a checkpoint of an earlier run exists; give --resume to continue it or "
                                          "--restart to start again from step 0 (replacing it)");
  if (f.restart && file_exists(checkpoint) && std::remove(checkpoint.c_str()) != 0)
    throw WorkError("cannot remove the old checkpoint " + checkpoint);
  apply_threads(ctx);

  struct sigaction sa {};
  sa.sa_handler = request_stop;
  sigemptyset(&sa.sa_mask);
  struct sigaction old_int {}, old_term {};
  sigaction(SIGINT, &sa, &old_int);
  sigaction(SIGTERM, &sa, &old_term);

  auto progress = make_progress(ctx, "train");
  LearnedTrainingRun run;
  run.config_file = f.config;
  run.out = f.out;
  run.resume = f.resume;
  run.threads = ctx.threads;
  run.progress = progress.get();
  run.stop = &g_stop_training;
  run.command = ctx.command_line;
  say(ctx, "training " + plan.description + " on " + std::string(to_string(plan.modality)) + " data from " +
               f.config);
  std::cout.flush();  // the line tells a supervising process that SIGINT now checkpoints
  LearnedTrainingOutcome r;
  try {
    r = backend.train(run);
  } catch (const InputError& e) {
    sigaction(SIGINT, &old_int, nullptr);
    sigaction(SIGTERM, &old_term, nullptr);
    throw_with_flags(e, {{"resume", "--resume"}});
  } catch (...) {
    sigaction(SIGINT, &old_int, nullptr);
    sigaction(SIGTERM, &old_term, nullptr);
    throw;
  }
  sigaction(SIGINT, &old_int, nullptr);
  sigaction(SIGTERM, &old_term, nullptr);
  if (r.interrupted)
    throw WorkError("training interrupted after step " + std::to_string(r.steps_done) + "; checkpoint " +
                    r.checkpoint + " (continue with --resume)");
  auto metric = [&r](const char* key) {
    const auto it = r.metrics.find(key);
    return it == r.metrics.end() ? 0.0 : it->second;
  };
  const char* limit = metric("time_limit_reached") != 0.0 ? " (time limit reached)" : "";
  char buf[256];
  if (plan.kind == "flow")
    std::snprintf(buf, sizeof buf, "%s: %lld steps in %.1f s, validation %.4f bits/dim (training batch %.4f)%s",
                  f.out.c_str(), static_cast<long long>(r.steps_done), metric("seconds"),
                  metric("val_bits_per_dim"), metric("train_bits_per_dim"), limit);
  else
    std::snprintf(buf, sizeof buf, "%s: %lld steps in %.1f s, validation PSNR %.2f dB (A^H y %.2f dB), SSIM %.4f%s",
                  f.out.c_str(), static_cast<long long>(r.steps_done), metric("seconds"), metric("val_psnr_db"),
                  metric("val_psnr_baseline_db"), metric("val_ssim"), limit);
  say(ctx, buf);
}

}  // namespace

void register_cmd_train(CLI::App& app, Context& ctx) {
  auto flags = std::make_shared<TrainFlags>();
  CLI::App* sub = app.add_subcommand("train", "Train a learned unrolled reconstruction model on phantom families");
  sub->add_option("--config", flags->config, "Training config (TOML: [data], [model], [train]; see configs/train-*.toml)")
      ->required();
  sub->add_option("--out", flags->out, "Model file to write (.h5); the checkpoint goes beside it as NAME.checkpoint.h5")
      ->required();
  sub->add_flag("--resume", flags->resume, "Continue from the checkpoint of an interrupted run with the same config");
  sub->add_flag("--restart", flags->restart, "Start from step 0 even though a checkpoint exists (it is replaced)");
  sub->footer("SIGINT/SIGTERM write a checkpoint and stop; --resume then continues with identical results.\n"
              "When a checkpoint exists, train refuses to start without --resume or --restart.");
  sub->callback([flags, &ctx] { run_train(*flags, ctx); });
}

}  // namespace recofold::cli
