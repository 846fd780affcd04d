// SPDX-License-Identifier: Apache-2.0
// Learned (unrolled) models of a study: loaded from model files or trained inside the study.
//
// In a build without the learn module (RECOFOLD_WITH_LIBTORCH=OFF) the set is
// empty and study_has_learn() is false; configs with learned methods are then
// refused at load time (or the methods skipped when marked optional).
#pragma once

#include <atomic>
#include <memory>
#include <string>

#include "recofold/core/measurement.h"
#include "recofold/core/progress.h"
#include "recofold/core/types.h"
#include "recofold/study/study_config.h"

namespace recofold {

class LearnedModelSet {
 public:
  LearnedModelSet();
  ~LearnedModelSet();
  LearnedModelSet(const LearnedModelSet&) = delete;
  LearnedModelSet& operator=(const LearnedModelSet&) = delete;

  // Loads every `model` file and trains every `train` method of the config
  // that is still missing into `<out_dir>/models/<name>.h5` (a rerun reuses
  // it; an interrupted training resumes from its checkpoint). Training
  // progress goes to `progress` (may be null); when `stop` is set the
  // training writes its checkpoint and prepare() throws WorkError.
  void prepare(const StudyConfig& config, const std::string& out_dir, ProgressSink* progress,
               const std::atomic<bool>* stop = nullptr);

  // Reconstruction of `m` by the model of method `name` (complex [ny, nx]);
  // `outside` receives the training conditions the measurement lies outside
  // ("" when inside). Serialised internally (safe to call from several threads).
  ImageC reconstruct(const std::string& name, const Measurement& m, std::string* outside) const;

  // Model file of method `name` ("" if none), and its trained_on conditions as JSON.
  std::string model_path(const std::string& name) const;
  std::string trained_on_json(const std::string& name) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace recofold
