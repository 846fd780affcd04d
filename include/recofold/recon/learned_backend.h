// SPDX-License-Identifier: Apache-2.0
// The learned-reconstruction backend: an interface recon declares and the learn module implements.
//
// recon, study and cli never include learn headers (and so never libtorch):
// method unrolled, the study's learned methods and model inspection go
// through find_learned_backend(). The learn module implements
// LearnedBackend and registers it (register_learned_backend) when the program
// loads it at run time (a shared module, so commands that need no learned
// method never load libtorch); a build without
// libtorch (RECOFOLD_WITH_LIBTORCH=OFF) registers nothing, so the lookup
// returns no backend and a one-line reason, and unrolled is refused as bad
// usage. The interface is plain C++ (no torch types) so that it can also be
// served by a module loaded at run time.
#pragma once

#include <atomic>
#include <cstdint>
#include <map>
#include <memory>
#include <string>

#include "recofold/core/measurement.h"
#include "recofold/core/progress.h"
#include "recofold/core/types.h"

namespace recofold {

// What a model file holds (without running it).
struct LearnedModelInfo {
  Modality modality = Modality::kMri;  // the measurements it reconstructs
  Index ny = 0, nx = 0;                // its image grid
  std::string architecture_json;       // the architecture (JSON object)
  std::string trained_on_json;         // training conditions (JSON object); "" for an untrained model
  std::string description;             // one line, e.g. "mri 64x64, cnn depth 5 width 32 k3 shared, 5 it, dc cg(5)"
};

// What a training config would train.
struct LearnedTrainingPlan {
  Modality modality = Modality::kMri;
  Index ny = 0, nx = 0;
  std::string description;
  std::string kind = "unrolled";  // "unrolled" (a reconstruction network) or "flow" (a generative image prior)
};

// A reconstruction by a model.
struct LearnedReconstruction {
  ImageC image;                  // [ny, nx]; complex for mri, real (imaginary part 0) for ct
  std::string outside_training;  // "" inside the model's training conditions, else which ones it lies outside
  std::string description;       // one line
  std::map<std::string, std::string> text_attrs;  // attributes for the output file (model, model_checksum, ...)
};

// One training run.
struct LearnedTrainingRun {
  std::string config_file;                  // training config (TOML)
  std::string out;                          // model file to write
  bool resume = false;                      // continue from the checkpoint (an error when there is none)
  bool resume_if_checkpoint = false;        // continue when a checkpoint of `out` exists, else start fresh
  int64_t steps = 0;                        // > 0 overrides the config's train.steps
  uint64_t seed = 0;                        // > 0 overrides the config's train.seed (objects, noise, weights)
  int threads = 0;                          // > 0: torch/OpenMP threads when the config's train.threads is 0
  ProgressSink* progress = nullptr;         // may be null
  const std::atomic<bool>* stop = nullptr;  // set: write the checkpoint and return interrupted
  std::string command;                      // for provenance
};

struct LearnedTrainingOutcome {
  bool interrupted = false;  // stopped early: the checkpoint holds the state, no model file written
  int64_t steps_done = 0;
  std::string checkpoint;  // the checkpoint path (when interrupted)
  // unrolled: val_psnr_db, val_ssim, val_psnr_baseline_db; flow: val_bits_per_dim, train_bits_per_dim;
  // both: final_loss, seconds, time_limit_reached (0 or 1)
  std::map<std::string, double> metrics;
};

class LearnedBackend {
 public:
  virtual ~LearnedBackend() = default;
  // "learn (libtorch 2.1)": shown in messages.
  virtual std::string name() const = 0;
  // Reads a model file. InputError naming the file when it is not a valid model file.
  virtual LearnedModelInfo inspect_model(const std::string& model_file) const = 0;
  // Reads a training config. InputError (file, line, key) when it is invalid.
  virtual LearnedTrainingPlan inspect_training(const std::string& config_file) const = 0;
  // Reconstructs `m` with the model in `model_file` (loaded once and kept;
  // safe to call from several threads). InputError naming the model file when
  // it does not fit the measurement (modality, image size).
  virtual LearnedReconstruction reconstruct(const Measurement& m, const std::string& model_file) const = 0;
  // Trains a model (resumable; see LearnedTrainingRun). InputError for a bad
  // config or resume; WorkError when the training fails.
  virtual LearnedTrainingOutcome train(const LearnedTrainingRun& run) const = 0;
  // The checkpoint file a training run writing `model_out` keeps beside it.
  virtual std::string checkpoint_file(const std::string& model_out) const = 0;
  // Plausibility of an image under a generative (flow) model: -log2 p(x) per
  // pixel (bits per dimension) of the real image `image` [ny, nx] in the
  // flow's own units. InputError naming `model_file` when it is no flow model,
  // naming `image_file` (field "image size") when the image does not fit it.
  virtual double bits_per_dim(const std::string& model_file, const ImageF& image,
                              const std::string& image_file) const = 0;
  // -log p(x) of the image `x` (flat [ny * nx]; the real part under the flow,
  // the imaginary part under the flow's Gaussian of width imag_sigma) under
  // the flow in `model_file`, in nats, and its gradient with respect to x
  // (d/dRe + i d/dIm) when `gradient` is not null. The flow is loaded once and
  // kept; safe to call from several threads. InputError naming `model_file`
  // when it is no flow model or its grid is not ny x nx.
  virtual double flow_neg_log_density(const std::string& model_file, Index ny, Index nx, const VecC& x,
                                      VecC* gradient) const = 0;
};

struct LearnedBackendLookup {
  const LearnedBackend* backend = nullptr;  // null: none available
  std::string reason;                       // one line when null, e.g. "this build has no learn module ..."
};

// The registered backend, or null with the reason.
LearnedBackendLookup find_learned_backend();

// The reason find_learned_backend() gives while no backend is registered
// (e.g. the learn module could not be loaded, and why). Empty: the default
// reason (a build without the learn module).
void set_learned_backend_absence(const std::string& reason);

// Installs `backend` for the whole program (the learn module calls it once at
// start-up; a later call replaces it). Not for use while reconstructions run.
void register_learned_backend(std::unique_ptr<LearnedBackend> backend);

}  // namespace recofold
