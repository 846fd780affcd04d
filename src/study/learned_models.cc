// SPDX-License-Identifier: Apache-2.0
// Learned models of a study through the learn module's public API (empty when the build has no learn module).
#include "recofold/study/learned_models.h"

#include <sys/stat.h>

#include <map>
#include <mutex>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"

#ifdef RECOFOLD_STUDY_WITH_LEARN
#include "recofold/learn/model.h"
#include "recofold/learn/trainer.h"
#include "recofold/learn/training_config.h"
#endif

namespace recofold {

#ifdef RECOFOLD_STUDY_WITH_LEARN

bool study_has_learn() { return true; }

struct LearnedModelSet::Impl {
  std::map<std::string, std::unique_ptr<UnrolledModel>> models;
  std::map<std::string, std::string> paths;
  mutable std::mutex mutex;
};

namespace {
void check_fits(const UnrolledModel& model, const StudyMethod& m, const StudyConfig& c, const std::string& path) {
  const UnrolledArchitecture& a = model.architecture();
  if (!m.applies_to(a.modality))
    throw InputError(c.file, "method.modality",
                     "method '" + m.name + "' runs on " + std::string(to_string(m.modalities.front())) +
                         " but model '" + path + "' is for " + std::string(to_string(a.modality)),
                     m.line);
  if (a.ny != c.ny || a.nx != c.nx)
    throw InputError(c.file, "size",
                     "model '" + path + "' of method '" + m.name + "' reconstructs " + std::to_string(a.ny) + "x" +
                         std::to_string(a.nx) + " images; the study uses " + std::to_string(c.ny) + "x" +
                         std::to_string(c.nx),
                     m.line);
}
}  // namespace

void LearnedModelSet::prepare(const StudyConfig& config, const std::string& out_dir, ProgressSink* progress,
                              const std::atomic<bool>* stop) {
  // Model files first: a bad one is refused before anything is trained or written.
  for (const StudyMethod& m : config.methods) {
    if (!m.learned() || m.model_path.empty()) continue;
    auto model = std::make_unique<UnrolledModel>(UnrolledModel::load(m.model_path));
    check_fits(*model, m, config, m.model_path);
    impl_->paths[m.name] = m.model_path;
    impl_->models[m.name] = std::move(model);
  }
  for (const StudyMethod& m : config.methods) {
    if (!m.learned() || m.train_config.empty()) continue;
    TrainingConfig tc = TrainingConfig::load(m.train_config);
    if (m.train_steps > 0) tc.train.steps = m.train_steps;
    if (tc.data.modality != m.modalities.front() || tc.data.ny != config.ny || tc.data.nx != config.nx)
      throw InputError(m.train_config, "data",
                       "trains a " + std::string(to_string(tc.data.modality)) + " model of " + std::to_string(tc.data.ny) + "x" +
                           std::to_string(tc.data.nx) + " but method '" + m.name + "' of the study needs " +
                           std::string(to_string(m.modalities.front())) + " at " + std::to_string(config.ny) + "x" +
                           std::to_string(config.nx));
    const std::string dir = out_dir + "/models";
    ::mkdir(out_dir.c_str(), 0777);
    ::mkdir(dir.c_str(), 0777);
    const std::string path = dir + "/" + m.name + ".h5";
    if (!file_exists(path)) {
      TrainRun run;
      run.out = path;
      run.resume = file_exists(checkpoint_path(path));
      run.progress = progress;
      run.stop = stop;
      run.command = "recofold study " + config.file + " (method " + m.name + ")";
      const TrainResult r = train_unrolled_model(tc, run);
      if (r.interrupted) throw WorkError("training of '" + m.name + "' was interrupted; rerun the study to resume it");
    }
    auto model = std::make_unique<UnrolledModel>(UnrolledModel::load(path));
    check_fits(*model, m, config, path);
    impl_->paths[m.name] = path;
    impl_->models[m.name] = std::move(model);
  }
}

ImageC LearnedModelSet::reconstruct(const std::string& name, const Measurement& m, std::string* outside) const {
  const auto it = impl_->models.find(name);
  if (it == impl_->models.end()) throw WorkError("no model for learned method '" + name + "'");
  std::lock_guard<std::mutex> lock(impl_->mutex);
  if (outside) *outside = it->second->outside_training(m);
  return it->second->reconstruct(m);
}

std::string LearnedModelSet::trained_on_json(const std::string& name) const {
  const auto it = impl_->models.find(name);
  if (it == impl_->models.end() || !it->second->info().trained_on) return "";
  return it->second->info().trained_on->to_json();
}

#else  // no learn module

bool study_has_learn() { return false; }

struct LearnedModelSet::Impl {
  std::map<std::string, std::string> paths;
};

void LearnedModelSet::prepare(const StudyConfig& config, const std::string&, ProgressSink*,
                              const std::atomic<bool>*) {
  for (const StudyMethod& m : config.methods)
    if (m.learned())
      throw InputError(config.file, "method", "learned method '" + m.name + "' needs the learn module", m.line);
}

ImageC LearnedModelSet::reconstruct(const std::string& name, const Measurement&, std::string*) const {
  throw WorkError("learned method '" + name + "' needs the learn module");
}

std::string LearnedModelSet::trained_on_json(const std::string&) const { return ""; }

#endif

LearnedModelSet::LearnedModelSet() : impl_(std::make_unique<Impl>()) {}
LearnedModelSet::~LearnedModelSet() = default;

std::string LearnedModelSet::model_path(const std::string& name) const {
  const auto it = impl_->paths.find(name);
  return it == impl_->paths.end() ? "" : it->second;
}

}  // namespace recofold
