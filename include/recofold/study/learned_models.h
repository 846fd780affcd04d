// SPDX-License-Identifier: Apache-2.0
// Learned (unrolled) models of a study: checked from model files or trained inside the study, through the learned backend.
//
// Everything goes through recon's LearnedBackend (recon/learned_backend.h):
// the study never includes learn headers. Without a backend
// (RECOFOLD_WITH_LIBTORCH=OFF, or none registered) study_has_learn() is false;
// configs with learned methods are then refused at load time (or the methods
// skipped when marked optional).
#pragma once

#include <atomic>
#include <map>
#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/study/study_config.h"

namespace recofold {

class LearnedModelSet {
 public:
  // Checks every `model` file of the config against the study (modality,
  // image size) and trains every `train` method that is still missing into
  // `<out_dir>/models/<name>.h5` (a rerun reuses it; an interrupted training
  // resumes from its checkpoint). Training progress goes to `progress` (may be
  // null); when `stop` is set the training writes its checkpoint and
  // prepare() throws WorkError. Nothing is trained or written before every
  // model file passed its checks. Every model is checked for held-out
  // objects (study/held_out.h): a family object of the study that the model
  // trained or validated on is an InputError naming both ranges; models
  // trained here get a training seed no family table of the study uses.
  void prepare(const StudyConfig& config, const std::string& out_dir, ProgressSink* progress,
               const std::atomic<bool>* stop = nullptr);

  // Model file of method `name` ("" if none), and its trained_on conditions as JSON.
  std::string model_path(const std::string& name) const;
  std::string trained_on_json(const std::string& name) const;

  // The conditions of a case the model's own check (acquisition: pattern,
  // acceleration, noise, coils; CT views, photons) does not see: the object's
  // family against the training families, and the image size. "" inside;
  // else one phrase each, e.g. "object set qc-disk (a phantom table) not
  // among the training families [textured]". Empty for a model whose
  // trained_on does not record families.
  std::string object_outside(const std::string& name, const StudyPhantom& object, Index ny, Index nx) const;

 private:
  struct Trained {
    std::vector<std::string> families;
    Index ny = 0, nx = 0;
  };
  void remember(const StudyMethod& m, const std::string& path, const std::string& trained_on_json);
  std::map<std::string, std::string> paths_, trained_on_;
  std::map<std::string, Trained> trained_;
};

}  // namespace recofold
