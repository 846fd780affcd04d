// SPDX-License-Identifier: Apache-2.0
// LearnedBackend over the learn module's models and trainer.
#include "recofold/learn/backend.h"

#include <map>
#include <mutex>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"
#include "recofold/learn/flow_model.h"
#include "recofold/learn/model.h"
#include "recofold/learn/trainer.h"
#include "recofold/learn/training_config.h"

namespace recofold {

namespace {

class LearnBackend final : public LearnedBackend {
 public:
  std::string name() const override { return "learn (libtorch)"; }

  LearnedModelInfo inspect_model(const std::string& model_file) const override {
    Entry& e = entry(model_file);
    const UnrolledArchitecture& a = e.model->architecture();
    LearnedModelInfo info;
    info.modality = a.modality;
    info.ny = a.ny;
    info.nx = a.nx;
    info.architecture_json = a.to_json();
    if (e.model->info().trained_on) info.trained_on_json = e.model->info().trained_on->to_json();
    info.description = a.describe();
    return info;
  }

  LearnedTrainingPlan inspect_training(const std::string& config_file) const override {
    const TrainingConfig c = TrainingConfig::load(config_file);
    LearnedTrainingPlan p;
    p.modality = c.data.modality;
    p.ny = c.data.ny;
    p.nx = c.data.nx;
    p.kind = c.kind == "flow" ? "flow" : "unrolled";
    p.description = c.kind == "flow" ? c.flow.describe() : c.architecture.describe();
    return p;
  }

  LearnedReconstruction reconstruct(const Measurement& m, const std::string& model_file) const override {
    Entry& e = entry(model_file);
    LearnedReconstruction r;
    {
      std::lock_guard<std::mutex> lock(e.mutex);
      r.image = e.model->reconstruct(m, model_file);
      r.outside_training = e.model->outside_training(m);
    }
    if (m.modality != Modality::kMri)
      for (Index k = 0; k < r.image.size(); ++k) r.image.data()[k] = cfloat(r.image.data()[k].real(), 0.0f);
    r.description = "unrolled reconstruction (" + e.model->architecture().describe() + ")";
    r.text_attrs["model"] = model_file;
    r.text_attrs["model_checksum"] = e.checksum;
    r.text_attrs["model_architecture"] = e.model->architecture().to_json();
    return r;
  }

  LearnedTrainingOutcome train(const LearnedTrainingRun& run) const override {
    TrainingConfig tc = TrainingConfig::load(run.config_file);
    if (run.steps > 0) tc.train.steps = run.steps;
    if (run.seed > 0) tc.train.seed = run.seed;
    if (tc.train.threads == 0 && run.threads > 0) tc.train.threads = run.threads;
    TrainRun t;
    t.out = run.out;
    t.resume = run.resume || (run.resume_if_checkpoint && file_exists(checkpoint_path(run.out)));
    t.progress = run.progress;
    t.stop = run.stop;
    t.command = run.command;
    const TrainResult r = train_model(tc, t);
    LearnedTrainingOutcome out;
    out.interrupted = r.interrupted;
    out.steps_done = r.steps_done;
    out.checkpoint = r.checkpoint;
    if (tc.kind == "flow") {
      out.metrics["val_bits_per_dim"] = r.val_bits_per_dim;
      out.metrics["train_bits_per_dim"] = r.train_bits_per_dim;
    } else {
      out.metrics["val_psnr_db"] = r.val_psnr_db;
      out.metrics["val_ssim"] = r.val_ssim;
      out.metrics["val_psnr_baseline_db"] = r.val_psnr_baseline_db;
    }
    out.metrics["time_limit_reached"] = r.time_limit_reached ? 1.0 : 0.0;
    out.metrics["final_loss"] = r.final_loss;
    out.metrics["seconds"] = r.seconds;
    return out;
  }

  std::string checkpoint_file(const std::string& model_out) const override { return checkpoint_path(model_out); }

  double bits_per_dim(const std::string& model_file, const ImageF& image,
                      const std::string& image_file) const override {
    if (!file_exists(model_file)) throw InputError(model_file, "model", "model file not found");
    const FlowModel flow = FlowModel::load(model_file);
    NdArray<float> x(Shape{image.rows(), image.cols()});
    for (Index k = 0; k < image.size(); ++k) x.data[static_cast<size_t>(k)] = image.data()[k];
    return flow.bits_per_dim(x, image_file).at(0);
  }

  double flow_neg_log_density(const std::string& model_file, Index ny, Index nx, const VecC& x,
                              VecC* gradient) const override {
    FlowEntry& e = flow_entry(model_file);
    const FlowArchitecture& a = e.flow->architecture();
    if (a.channels != 1 || a.ny != ny || a.nx != nx)
      throw InputError(model_file, "model",
                       "the flow models " + std::to_string(a.channels) + "-channel " + std::to_string(a.ny) + "x" +
                           std::to_string(a.nx) + " images; prior flow needs a 1-channel " + std::to_string(ny) +
                           "x" + std::to_string(nx) + " flow for this measurement");
    std::lock_guard<std::mutex> lock(e.mutex);
    return e.flow->neg_log_density(x, gradient);
  }

 private:
  struct FlowEntry {
    std::unique_ptr<FlowModel> flow;
    std::mutex mutex;  // one evaluation of this flow at a time
  };

  FlowEntry& flow_entry(const std::string& path) const {
    return cached(flows_, path, [&](FlowEntry& e) { e.flow = std::make_unique<FlowModel>(FlowModel::load(path)); });
  }

  struct Entry {
    std::unique_ptr<UnrolledModel> model;
    std::string checksum;
    std::mutex mutex;  // one reconstruction of this model at a time
  };

  // The model of `path`, loaded on first use (InputError naming the file when it is no model file).
  Entry& entry(const std::string& path) const {
    return cached(models_, path, [&](Entry& e) {
      e.model = std::make_unique<UnrolledModel>(UnrolledModel::load(path));
      e.checksum = file_checksum(path);
    });
  }

  // The entry of `path` in `cache`, filled by `load` on first use (InputError naming a missing file).
  template <class E, class Load>
  E& cached(std::map<std::string, std::unique_ptr<E>>& cache, const std::string& path, const Load& load) const {
    std::lock_guard<std::mutex> lock(mutex_);
    auto it = cache.find(path);
    if (it == cache.end()) {
      if (!file_exists(path)) throw InputError(path, "model", "model file not found");
      auto e = std::make_unique<E>();
      load(*e);
      it = cache.emplace(path, std::move(e)).first;
    }
    return *it->second;
  }

  mutable std::mutex mutex_;
  mutable std::map<std::string, std::unique_ptr<Entry>> models_;
  mutable std::map<std::string, std::unique_ptr<FlowEntry>> flows_;
};

}  // namespace

std::unique_ptr<LearnedBackend> make_learn_backend() { return std::make_unique<LearnBackend>(); }

}  // namespace recofold

// The entry point the program looks up after loading this module at run time
// (src/cli/learn_cli.cc): registers the backend in the program's recon
// library, which this module shares. Returns 0; non-zero when it failed.
extern "C" int recofold_learn_module_install() noexcept {
  try {
    recofold::register_learned_backend(recofold::make_learn_backend());
    return 0;
  } catch (...) {
    return 1;
  }
}

namespace recofold {

}  // namespace recofold
