// SPDX-License-Identifier: Apache-2.0
// Learned models of a study through the learned backend (recon/learned_backend.h).
#include "recofold/study/learned_models.h"

#include <sys/stat.h>

#include <algorithm>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/recon/learned_backend.h"
#include "recofold/study/held_out.h"
#include "study_util.h"

namespace recofold {

bool study_has_learn() { return find_learned_backend().backend != nullptr; }

namespace {

void check_fits(Modality modality, Index ny, Index nx, const StudyMethod& m, const StudyConfig& c,
                const std::string& path, const std::string& what) {
  if (!m.applies_to(modality))
    throw InputError(c.file, "method[" + std::to_string(m.index) + "].modality",
                     "method '" + m.name + "' runs on " + modality_label(m.modalities.front()) + " but " + what +
                         " '" + path + "' is for " + modality_label(modality),
                     m.line);
  if (ny != c.ny || nx != c.nx)
    throw InputError(c.file, "size",
                     what + " '" + path + "' of method '" + m.name + "' is for " + std::to_string(ny) + "x" +
                         std::to_string(nx) + " images; the study uses " + std::to_string(c.ny) + "x" +
                         std::to_string(c.nx),
                     m.line);
}

}  // namespace

void LearnedModelSet::prepare(const StudyConfig& config, const std::string& out_dir, ProgressSink* progress,
                              const std::atomic<bool>* stop) {
  bool any = false;
  for (const StudyMethod& m : config.methods) any = any || m.learned();
  if (!any) return;
  const LearnedBackendLookup found = find_learned_backend();
  if (!found.backend) {
    for (const StudyMethod& m : config.methods)
      if (m.learned())
        throw InputError(config.file, "method[" + std::to_string(m.index) + "]",
                         "learned method '" + m.name + "': " + found.reason, m.line);
  }
  const LearnedBackend& backend = *found.backend;
  // Model files and training configs first: a bad one is refused before anything is trained or written.
  for (const StudyMethod& m : config.methods) {
    if (!m.learned()) continue;
    if (!m.model_path.empty()) {
      const LearnedModelInfo info = backend.inspect_model(m.model_path);
      check_fits(info.modality, info.ny, info.nx, m, config, m.model_path, "model");
      check_held_out(config, m, m.model_path, info.trained_on_json);
      remember(m, m.model_path, info.trained_on_json);
    } else {
      const LearnedTrainingPlan plan = backend.inspect_training(m.train_config);
      if (plan.kind != "unrolled")
        throw InputError(config.file, "method[" + std::to_string(m.index) + "].train",
                         "'" + m.train_config + "' trains a " + plan.kind +
                             " prior; a study method needs an unrolled reconstruction model",
                         m.line);
      check_fits(plan.modality, plan.ny, plan.nx, m, config, m.train_config, "training config");
    }
  }
  for (const StudyMethod& m : config.methods) {
    if (!m.learned() || m.train_config.empty()) continue;
    const std::string dir = out_dir + "/models";
    ::mkdir(out_dir.c_str(), 0777);
    ::mkdir(dir.c_str(), 0777);
    const std::string path = dir + "/" + m.name + ".h5";
    if (!file_exists(path)) {
      LearnedTrainingRun run;
      run.config_file = m.train_config;
      run.out = path;
      run.resume_if_checkpoint = true;
      run.steps = m.train_steps;
      run.seed = study_training_seed(config, m);  // no training object is a study object
      run.progress = progress;
      run.stop = stop;
      run.command = "recofold study " + config.file + " (method " + m.name + ")";
      const LearnedTrainingOutcome r = backend.train(run);
      if (r.interrupted) throw WorkError("training of '" + m.name + "' was interrupted; rerun the study to resume it");
    }
    const LearnedModelInfo info = backend.inspect_model(path);
    check_fits(info.modality, info.ny, info.nx, m, config, path, "model");
    check_held_out(config, m, path, info.trained_on_json);  // also a model kept from an earlier run
    remember(m, path, info.trained_on_json);
  }
}

void LearnedModelSet::remember(const StudyMethod& m, const std::string& path, const std::string& trained_on_json) {
  paths_[m.name] = path;
  trained_on_[m.name] = trained_on_json;
  Trained t;
  if (!trained_on_json.empty()) {
    const JsonValue j = parse_json(trained_on_json, path, "/model@trained_on");
    if (const JsonValue* f = j.find("families"); f && f->kind == JsonValue::Kind::kArray)
      for (const JsonValue& v : f->items)
        if (v.kind == JsonValue::Kind::kString) t.families.push_back(v.text);
    const JsonValue *ny = j.find("ny"), *nx = j.find("nx");
    if (ny && nx && ny->kind == JsonValue::Kind::kNumber && nx->kind == JsonValue::Kind::kNumber) {
      t.ny = static_cast<Index>(ny->number);
      t.nx = static_cast<Index>(nx->number);
    }
  }
  trained_[m.name] = t;
}

std::string LearnedModelSet::object_outside(const std::string& name, const StudyPhantom& object, Index ny,
                                            Index nx) const {
  const auto it = trained_.find(name);
  if (it == trained_.end()) return "";
  const Trained& t = it->second;
  std::string out;
  if (!t.families.empty() &&
      std::find(t.families.begin(), t.families.end(), object.family) == t.families.end()) {
    std::string list;
    for (const std::string& f : t.families) list += (list.empty() ? "" : ", ") + f;
    const std::string what = !object.family.empty()           ? "family " + object.family
                             : !object.table_path.empty()     ? "object " + object.label + " (a phantom table)"
                             : !object.measurement_path.empty() ? "object " + object.label + " (a measurement)"
                                                                : "object " + object.label + " (an image)";
    out = what + " not among the training families [" + list + "]";
  }
  if (t.ny > 0 && (t.ny != ny || t.nx != nx))
    out += (out.empty() ? "" : "; ") + std::string("size ") + std::to_string(ny) + "x" + std::to_string(nx) +
           " (trained " + std::to_string(t.ny) + "x" + std::to_string(t.nx) + ")";
  return out;
}

std::string LearnedModelSet::model_path(const std::string& name) const {
  const auto it = paths_.find(name);
  return it == paths_.end() ? "" : it->second;
}

std::string LearnedModelSet::trained_on_json(const std::string& name) const {
  const auto it = trained_on_.find(name);
  return it == trained_on_.end() ? "" : it->second;
}

}  // namespace recofold
