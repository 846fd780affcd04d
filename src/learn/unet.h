// SPDX-License-Identifier: Apache-2.0
// U-Net (Ronneberger, Fischer & Brox, MICCAI 2015) as a torch module (private to learn).
#pragma once

#include <torch/torch.h>

#include <vector>

namespace recofold::internal {

// in_channels -> out_channels on [B, C, H, W] with H, W divisible by 2^depth.
// Level l (0 = top) has width * 2^l channels: two conv3x3 + ReLU per level on
// the way down, 2x2 max pooling between levels, a bottom block at level
// depth, and on the way up a 2x2 transposed convolution (stride 2) halving
// the channels, concatenation with the same level's encoder output (when
// `skips`) and two conv3x3 + ReLU; finally a 1x1 convolution to out_channels
// (zero-initialised when zero_last). Parameter names: down<l>.0/.2, bottom.0/.2,
// up<l> (transposed convolution), dec<l>.0/.2, out (.weight/.bias).
class UNetImpl : public torch::nn::Module {
 public:
  UNetImpl(int in_channels, int out_channels, int depth, int width, bool skips, bool zero_last);
  torch::Tensor forward(const torch::Tensor& x);

 private:
  int depth_;
  bool skips_;
  std::vector<torch::nn::Sequential> down_, dec_;
  std::vector<torch::nn::ConvTranspose2d> up_;
  torch::nn::Sequential bottom_{nullptr};
  torch::nn::Conv2d out_{nullptr};
};
TORCH_MODULE(UNet);

}  // namespace recofold::internal
