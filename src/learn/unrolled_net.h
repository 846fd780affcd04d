// SPDX-License-Identifier: Apache-2.0
// The learned unrolled network as a torch module, and batches of measurements prepared for it (private to learn).
#pragma once

#include <torch/torch.h>

#include <map>
#include <mutex>
#include <string>
#include <vector>

#include "recofold/core/measurement.h"
#include "recofold/learn/architecture.h"
#include "flow_net.h"
#include "recofold/ops/wavelet.h"
#include "torch_bridge.h"
#include "unet.h"

namespace recofold::internal {

// Measurements ready for the network: scaled operators, scaled data and
// (when every measurement carries one) the truth magnitudes.
struct PreparedBatch {
  OperatorBatch ops;
  torch::Tensor data;   // [B, 2, R]: s_b y_b
  torch::Tensor truth;  // [B, ny, nx] |truth|, or undefined
};

// Builds the operators of the measurements (SENSE for MRI, Joseph projector
// for CT) and scales each so that ||s A|| = 1 (power iteration), except for
// dc "replace", which needs the unscaled single-coil Fourier operator.
// Throws InputError(file, ...) when a measurement's modality or grid does not
// fit the architecture, or when "replace" meets multi-coil data.
PreparedBatch prepare_batch(const std::vector<const Measurement*>& measurements, const UnrolledArchitecture& arch,
                            const std::string& file = "");

// K x (prior step, data-consistency step), architecture.h. Parameter names
// (the model file's dataset names): cnn<k>.<layer>.weight / .bias (k = 0
// when shared; layers are the Sequential's indices), unet<k>.<unet.h names>,
// dc_step [K] (gradient), dc_log_mu [K + 1] (cg: mu_k = exp; the last entry
// is the initial solve's), wavelet_log_threshold [K, bands], tv_log_theta [K],
// flow_log_step [K], flow_log_lambda [K] and flow.<flow_net.h names>.
class UnrolledNetImpl : public torch::nn::Module {
 public:
  explicit UnrolledNetImpl(const UnrolledArchitecture& arch);

  // data [B, 2, R] (prepared), returns the complex images [B, 2, ny, nx].
  torch::Tensor forward(const torch::Tensor& data, const OperatorBatch& ops);

  const UnrolledArchitecture& architecture() const { return arch_; }
  // The flow of prior "flow" (null otherwise), e.g. to load a trained flow's weights.
  FlowNet flow() const { return flow_; }

  torch::Tensor prior_step(int k, const torch::Tensor& x);

 private:
  torch::Tensor flow_prior_step(int k, const torch::Tensor& x);
  torch::Tensor mu(int k) const;

  UnrolledArchitecture arch_;
  std::vector<torch::nn::Sequential> cnn_;
  std::vector<UNet> unet_;
  FlowNet flow_{nullptr};
  torch::Tensor dc_step_, dc_log_mu_, log_threshold_, tv_log_theta_, flow_log_step_, flow_log_lambda_;
  // The wavelet transform as a batch of one, and as batches of B (the
  // autograd graph keeps a pointer to the batch, so each lives as long as the
  // module; map nodes do not move).
  OperatorBatch wavelet_;
  const OperatorBatch& wavelet_batch(int64_t size);
  std::map<int64_t, OperatorBatch> wavelet_batches_;
  std::mutex wavelet_mutex_;
  torch::Tensor band_index_;       // [ny*nx] int64: sub-band of each coefficient
};
TORCH_MODULE(UnrolledNet);

// Adam (Kingma & Ba, ICLR 2015) with beta = (0.9, 0.999), eps = 1e-8,
// written out as PyTorch's single-tensor torch.optim.Adam update:
//   m = b1 m + (1 - b1) g;  v = b2 v + (1 - b2) g^2
//   p -= lr / (1 - b1^t) * m / (sqrt(v) / sqrt(1 - b2^t) + eps)
struct AdamState {
  std::vector<torch::Tensor> m, v;  // one per parameter, in parameter order
};
AdamState make_adam_state(const std::vector<std::pair<std::string, torch::Tensor>>& params);
// Scales the gradients so their global 2-norm is at most clip_norm (0: no
// clipping), then takes Adam step number t (1-based) at rate lr.
void adam_step(const std::vector<std::pair<std::string, torch::Tensor>>& params, AdamState& state, double lr,
               int64_t t, double clip_norm);

// |x| of a [B, 2, ny, nx] image as [B, ny, nx], smooth at 0 (sqrt(re^2 + im^2 + 1e-12)).
torch::Tensor magnitude(const torch::Tensor& x);

}  // namespace recofold::internal
