// SPDX-License-Identifier: Apache-2.0
// Torch state behind UnrolledModel and the model-file tensor I/O shared with checkpoints (private to learn).
#pragma once

#include <torch/torch.h>

#include <string>
#include <vector>

#include "recofold/io/h5_file.h"
#include "recofold/learn/model.h"
#include "unrolled_net.h"

namespace recofold::internal {

struct ModelState {
  explicit ModelState(const UnrolledArchitecture& a) : net(a) {}
  UnrolledNet net;
  ModelInfo info;
};

// Writes named tensors as float32 datasets under `group` ("/model/parameters").
void write_tensors(H5Writer& w, const std::string& group,
                   const std::vector<std::pair<std::string, torch::Tensor>>& tensors);
// Copies datasets under `group` into the given tensors (names and shapes must
// match exactly; InputError(file, dataset, ...) otherwise, also for extra datasets).
void read_tensors(const H5Reader& r, const std::string& group,
                  const std::vector<std::pair<std::string, torch::Tensor>>& tensors);
// The model-file attributes every kind shares: /model@trained_on, @metrics,
// @config and /provenance.
void write_info(H5Writer& w, const ModelInfo& info);
void read_info(const H5Reader& r, ModelInfo& info);
// "unrolled" (also for files without /model@kind) or "flow"; InputError when
// the file has no /model group with an architecture or an unknown kind.
std::string read_model_kind(const H5Reader& r);
// The /model group and /provenance of a model (used by save and by checkpoints).
void write_model_groups(H5Writer& w, const ModelState& s);
// Reads /model of a file into a new state (architecture, info, weights).
std::unique_ptr<ModelState> read_model_groups(const H5Reader& r);
// Where a checkpoint of either trainer left off. read_checkpoint checks that the
// checkpoint at `path` was made with config text `config_text` (InputError
// "/train@config" naming `config_file` otherwise; "resume" when there is no
// checkpoint), then reads /model/parameters into `params` and /train/adam_m,
// /train/adam_v into `adam`.
struct CheckpointPosition {
  int64_t step = 0;
  double elapsed_seconds = 0;
};
CheckpointPosition read_checkpoint(const std::string& path, const std::string& config_text,
                                   const std::string& config_file,
                                   const std::vector<std::pair<std::string, torch::Tensor>>& params, AdamState& adam);
// Parameters in registration order with their dotted names.
std::vector<std::pair<std::string, torch::Tensor>> named_parameters(const ModelState& s);

}  // namespace recofold::internal
