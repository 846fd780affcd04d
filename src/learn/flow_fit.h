// SPDX-License-Identifier: Apache-2.0
// Maximum-likelihood fitting of a flow to a fixed set of samples (private to learn; the image trainer draws its own data).
#pragma once

#include <torch/torch.h>

#include <cstdint>
#include <vector>

#include "flow_net.h"

namespace recofold::internal {

struct FlowFitOptions {
  int64_t steps = 2000;             // Adam steps (>= 1)
  int batch = 256;                  // samples per step, drawn with replacement
  double learning_rate = 1e-3;      // initial rate; cosine decay to lr_final_fraction of it
  double lr_final_fraction = 0.05;
  double clip_norm = 0.0;           // global gradient-norm clipping; 0 = off
  double dequant = 0.0;             // uniform noise width added to every drawn sample (0: none)
  uint64_t seed = 1;                // minibatch draws and noise
};

// Minimises the mean negative log-likelihood of minibatches of `samples`
// [N, channels, ny, nx] (actnorm initialised from the first 512 samples).
// Returns the training loss (nats per sample) of every step.
std::vector<double> fit_flow(FlowNetImpl& net, const torch::Tensor& samples, const FlowFitOptions& options);

// Cosine learning rate at `step` of `steps` (from lr down to final_fraction * lr).
double cosine_rate(double lr, double final_fraction, int64_t step, int64_t steps);

}  // namespace recofold::internal
