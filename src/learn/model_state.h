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
// Parameters in registration order with their dotted names.
std::vector<std::pair<std::string, torch::Tensor>> named_parameters(const ModelState& s);

}  // namespace recofold::internal
