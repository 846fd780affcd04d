// SPDX-License-Identifier: Apache-2.0
// A learned unrolled reconstruction model: build, save/load (HDF5 model file), run on measurements.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "recofold/core/measurement.h"
#include "recofold/core/provenance.h"
#include "recofold/core/types.h"
#include "recofold/learn/architecture.h"
#include "recofold/learn/training_config.h"

namespace recofold {

// What a model file records besides its weights.
struct ModelInfo {
  std::optional<TrainingConditions> trained_on;  // absent for an untrained model
  std::map<std::string, double> metrics;         // e.g. val_psnr_db, val_psnr_zero_filled_db, steps, train_seconds
  std::string config_text;                       // the training config that made it
  Provenance provenance;
};

// The kind of a model file: "unrolled" or "flow". InputError(path, ...) when
// the file is not a model file.
std::string model_file_kind(const std::string& path);

namespace internal {
struct ModelState;  // the torch module (src/learn/model_state.h)
}

// Model file layout (HDF5, readable with h5py; ARCHITECTURE.md):
//   /model                      group, attributes:
//       format          int64  1
//       kind            string "unrolled" (this class) or "flow" (flow_model.h);
//                              files without it are "unrolled"
//       architecture    string JSON of the kind's architecture (UnrolledArchitecture, architecture.h)
//       trained_on      string JSON of TrainingConditions ("{}" when untrained)
//       metrics         string JSON object of numbers
//       config          string training config text ("" when none)
//   /model/parameters/<name>    float32, the tensor's shape; one per parameter,
//                               names as in internal::UnrolledNetImpl
//   /provenance                 attributes producer, command, created_utc and extras
// The root carries research_use_only = 1 and producer (h5_file.h).
class UnrolledModel {
 public:
  // A fresh model with torch's default initialisation drawn from `seed`
  // (same seed, same weights). The architecture must be valid (checked).
  explicit UnrolledModel(const UnrolledArchitecture& architecture, uint64_t seed = 1);
  ~UnrolledModel();
  UnrolledModel(UnrolledModel&&) noexcept;
  UnrolledModel& operator=(UnrolledModel&&) noexcept;

  // Reads a model file. InputError(path, field, ...) when the file is not a
  // model file, the architecture JSON is invalid or has unknown keys, a
  // parameter dataset is missing, extra, or of the wrong shape.
  static UnrolledModel load(const std::string& path);
  // Writes the model file atomically (temporary file + rename). WorkError on I/O failure.
  void save(const std::string& path) const;

  const UnrolledArchitecture& architecture() const;
  ModelInfo& info();
  const ModelInfo& info() const;

  // Parameter names in file order and the total number of scalars.
  std::vector<std::string> parameter_names() const;
  int64_t parameter_count() const;
  // A parameter's values (flattened, float32) and shape; InputError for an unknown name.
  std::vector<float> parameter_values(const std::string& name) const;

  // Reconstructs measurements (same modality and grid as the architecture;
  // otherwise InputError naming `file` and "modality" / "image size").
  // Returns complex images [ny, nx]. Deterministic for a fixed thread count.
  ImageC reconstruct(const Measurement& m, const std::string& file = "") const;
  std::vector<ImageC> reconstruct(const std::vector<const Measurement*>& ms, const std::string& file = "") const;

  // Empty when m lies inside trained_on (or the model records no conditions),
  // otherwise the phrases of TrainingConditions::outside().
  std::string outside_training(const Measurement& m) const;

  // The torch state, for the trainer (src/learn only).
  internal::ModelState& state();
  const internal::ModelState& state() const;

 private:
  explicit UnrolledModel(std::unique_ptr<internal::ModelState> state);
  std::unique_ptr<internal::ModelState> state_;
};

}  // namespace recofold
