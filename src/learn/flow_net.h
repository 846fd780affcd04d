// SPDX-License-Identifier: Apache-2.0
// The normalising flow as a torch module (private to learn): forward x -> z with log|det|, inverse, log density.
#pragma once

#include <torch/torch.h>

#include <vector>

#include "recofold/learn/flow_architecture.h"

namespace recofold::internal {

// One step of the flow (flow_architecture.h): [actnorm] -> [mixing] -> affine coupling.
// Parameter names: an_bias, an_logs [c]; mix_lower, mix_upper [c, c],
// mix_log_s [c] (invconv, channel steps); nn.0/.2/.4 .weight/.bias (the
// coupling network's convolutions); s_scale [c_t].
class FlowStepImpl : public torch::nn::Module {
 public:
  enum class Kind { kCheckerboard, kChannel };
  FlowStepImpl(Kind kind, int channels, int64_t h, int64_t w, int parity, const FlowArchitecture& arch);

  // y = step(x); logdet [B] is increased by log|det dy/dx|.
  torch::Tensor forward(const torch::Tensor& x, torch::Tensor& logdet);
  torch::Tensor inverse(const torch::Tensor& y);
  // Data-dependent actnorm initialisation from a batch x (no autograd); returns step(x).
  torch::Tensor initialize(const torch::Tensor& x);

 private:
  torch::Tensor mixing_weight() const;  // [c, c]
  torch::Tensor coupling(const torch::Tensor& x, torch::Tensor* logdet, bool inverse);

  Kind kind_;
  int c_, c_cond_, c_t_;
  int64_t h_, w_;
  bool actnorm_, invconv_, reverse_;
  torch::Tensor an_bias_, an_logs_, mix_lower_, mix_upper_, mix_log_s_, s_scale_;
  torch::Tensor mask_;           // checkerboard m [1, 1, h, w]
  torch::Tensor reversal_;       // P [c, c]
  torch::Tensor lower_mask_, upper_mask_;
  torch::nn::Sequential nn_{nullptr};
};
TORCH_MODULE(FlowStep);

// The whole flow; steps registered as step0, step1, ... in plan order.
class FlowNetImpl : public torch::nn::Module {
 public:
  explicit FlowNetImpl(const FlowArchitecture& arch);

  // x [B, channels, ny, nx] -> z [B, D] (latent layout of flow_architecture.h),
  // logdet [B] = log|det dz/dx| including the data normalisation.
  std::pair<torch::Tensor, torch::Tensor> forward(const torch::Tensor& x);
  // z [B, D] -> x [B, channels, ny, nx].
  torch::Tensor inverse(const torch::Tensor& z);
  // log p(x) [B] in nats (continuous density).
  torch::Tensor log_prob(const torch::Tensor& x);
  // Sets every actnorm from the batch (zero mean, unit variance per channel).
  void initialize(const torch::Tensor& x);

  const FlowArchitecture& architecture() const { return arch_; }
  // Scalar type of the parameters (float32 unless converted, e.g. for tests in double).
  torch::ScalarType dtype() const;

 private:
  struct PlanItem {
    enum class Op { kStep, kSqueeze, kSplit } op;
    int step = -1;       // kStep: index into steps_
    int channels = 0;    // kSplit: channels leaving
  };
  torch::Tensor run_forward(const torch::Tensor& x, torch::Tensor* logdet, bool init);

  FlowArchitecture arch_;
  std::vector<PlanItem> plan_;
  std::vector<FlowStep> steps_;
};
TORCH_MODULE(FlowNet);

// Squeeze [B, c, h, w] -> [B, 4c, h/2, w/2] (channel c' * 4 + 2 di + dj) and its inverse.
torch::Tensor squeeze2(const torch::Tensor& x);
torch::Tensor unsqueeze2(const torch::Tensor& x);

}  // namespace recofold::internal
