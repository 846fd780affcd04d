// SPDX-License-Identifier: Apache-2.0
// Torch state behind FlowModel and its model-file groups (private to learn).
#pragma once

#include <torch/torch.h>

#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "flow_net.h"
#include "recofold/io/h5_file.h"
#include "recofold/learn/flow_model.h"

namespace recofold::internal {

struct FlowState {
  explicit FlowState(const FlowArchitecture& a) : net(a) {}
  FlowNet net;
  ModelInfo info;
};

std::vector<std::pair<std::string, torch::Tensor>> named_parameters(const FlowState& s);
// /model (kind "flow") and /provenance of a flow model (save and checkpoints).
void write_flow_groups(H5Writer& w, const FlowState& s);
// Reads a flow model file's /model into a new state; InputError when /model is not of kind "flow".
std::unique_ptr<FlowState> read_flow_groups(const H5Reader& r);

// Image batches as torch tensors [B, channels, ny, nx], checked against the
// architecture (InputError(file, "image size" | "image", ...)).
torch::Tensor images_to_tensor(const NdArray<float>& images, const FlowArchitecture& a, const std::string& file);

}  // namespace recofold::internal
