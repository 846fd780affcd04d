// SPDX-License-Identifier: Apache-2.0
// Training of learned unrolled models on examples drawn on the fly, with checkpoints and exact resume.
#pragma once

#include <atomic>
#include <cstdint>
#include <string>

#include "recofold/core/progress.h"
#include "recofold/learn/training_config.h"

namespace recofold {

// How one training run is driven (besides the config).
struct TrainRun {
  std::string out;            // model file to write (.h5); the checkpoint is checkpoint_path(out)
  bool resume = false;        // continue from the checkpoint (InputError(checkpoint, "resume", ...) if none,
                              // or if the config changed)
  ProgressSink* progress = nullptr;  // step, loss, validation PSNR, throughput; may be null
  const std::atomic<bool>* stop = nullptr;  // set (e.g. by SIGINT/SIGTERM): checkpoint and return
  int64_t stop_after_steps = 0;  // > 0: behave as if stopped after this many steps (tests of resume)
  std::string command;        // for provenance
};

struct TrainResult {
  int64_t steps_done = 0;          // optimiser steps completed in total (including resumed ones)
  bool interrupted = false;        // stopped early; the checkpoint holds the state, no model file written
  bool time_limit_reached = false; // max_minutes ended training early; the model file was written
  double val_psnr_db = 0.0;        // mean PSNR (magnitude, peak = max |truth| per image) of the validation set
  double val_ssim = 0.0;
  double val_psnr_baseline_db = 0.0;  // same for A^H y (zero-filled for MRI; scaled back-projection for CT)
  double val_bits_per_dim = 0.0;   // flows: mean bits/dim of the validation images (with fixed dequantisation noise)
  double train_bits_per_dim = 0.0; // flows: bits/dim of the last training batch
  double final_loss = 0.0;         // training loss of the last step
  double seconds = 0.0;            // wall time of this run
  std::string checkpoint;          // path of the checkpoint (written when interrupted)
};

// Seed of the validation examples of a run with train.seed = seed: example i
// of the validation set is draw_training_example(data, validation_seed(seed), i).
// Below 2^53 (trained_on records it exactly) and different from seed.
uint64_t validation_seed(uint64_t seed);

// "<out>.checkpoint.h5" (a model file plus /train with the optimiser state).
std::string checkpoint_path(const std::string& out);

// Trains the architecture of `config` and writes the model file `run.out`
// (model.h layout: trained_on = config.data with the seed ranges of the
// objects seen, metrics, config text). With prior "flow" the flow's weights
// start from config.flow_model (frozen unless model.flow_finetune).
//
// Every step draws batch examples (training_data.h) with indices
// step * batch + j from the data seed, forms the loss on magnitudes
// (mse or l1, plus ssim_weight (1 - SSIM)), clips the global gradient norm
// and takes an Adam step (Kingma & Ba 2015; the update written out as in
// PyTorch's torch.optim.Adam, beta = (0.9, 0.999), eps = 1e-8) with the
// learning rate of the schedule at that step. A fixed validation set (its
// own seed stream) is scored every validation_every steps. Checkpoints
// (weights, Adam moments, step) are written atomically every
// checkpoint_every steps and when stopped; since data and learning rate
// depend only on the step, a resumed run reproduces an uninterrupted one
// (same threads) to float rounding. The checkpoint is removed after the
// model file is written.
//
// InputError for a bad resume (no checkpoint, changed config); WorkError for
// I/O failures or a non-finite loss.
TrainResult train_unrolled_model(const TrainingConfig& config, const TrainRun& run);

// Trains a normalising flow ([model] kind = "flow") by maximum likelihood on
// the truth images of the data stream (draw_training_object: objects
// step * batch + j of family seed train.seed) with dequantisation noise
// u ~ U(-dequant/2, dequant/2) drawn from a generator seeded by (seed, step),
// loss = -log p(x + u) / D (nats per dimension), Adam as above. The actnorm
// layers are initialised from the first batch. Validation: mean bits/dim of
// validation_count images of validation_seed(seed) with fixed noise.
// Checkpoints, resume and the stop flag work as for unrolled models; the
// model file records val_bits_per_dim, train_bits_per_dim, steps and
// train_seconds, and trained_on with the seed ranges seen.
TrainResult train_flow_model(const TrainingConfig& config, const TrainRun& run);

// train_flow_model or train_unrolled_model by config.kind.
TrainResult train_model(const TrainingConfig& config, const TrainRun& run);

}  // namespace recofold
