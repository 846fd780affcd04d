// SPDX-License-Identifier: Apache-2.0
// U-Net: encoder-decoder with skip connections.
#include "unet.h"

#include <string>

namespace recofold::internal {

namespace {
torch::nn::Sequential block(int in, int out) {
  return torch::nn::Sequential(torch::nn::Conv2d(torch::nn::Conv2dOptions(in, out, 3).padding(1)), torch::nn::ReLU(),
                               torch::nn::Conv2d(torch::nn::Conv2dOptions(out, out, 3).padding(1)), torch::nn::ReLU());
}
}  // namespace

UNetImpl::UNetImpl(int in_channels, int out_channels, int depth, int width, bool skips, bool zero_last)
    : depth_(depth), skips_(skips) {
  int c = in_channels;
  for (int l = 0; l < depth; ++l) {
    const int w = width << l;
    down_.push_back(register_module("down" + std::to_string(l), block(c, w)));
    c = w;
  }
  bottom_ = register_module("bottom", block(c, width << depth));
  c = width << depth;
  up_.resize(static_cast<size_t>(depth), nullptr);
  dec_.resize(static_cast<size_t>(depth), nullptr);
  for (int l = depth - 1; l >= 0; --l) {
    const int w = width << l;
    up_[static_cast<size_t>(l)] = register_module(
        "up" + std::to_string(l), torch::nn::ConvTranspose2d(torch::nn::ConvTranspose2dOptions(c, w, 2).stride(2)));
    dec_[static_cast<size_t>(l)] = register_module("dec" + std::to_string(l), block(skips ? 2 * w : w, w));
    c = w;
  }
  out_ = register_module("out", torch::nn::Conv2d(torch::nn::Conv2dOptions(c, out_channels, 1)));
  if (zero_last) {
    torch::NoGradGuard ng;
    out_->weight.zero_();
    out_->bias.zero_();
  }
}

torch::Tensor UNetImpl::forward(const torch::Tensor& x_in) {
  std::vector<torch::Tensor> skip;
  torch::Tensor x = x_in;
  for (int l = 0; l < depth_; ++l) {
    x = down_[static_cast<size_t>(l)]->forward(x);
    if (skips_) skip.push_back(x);
    x = torch::max_pool2d(x, 2);
  }
  x = bottom_->forward(x);
  for (int l = depth_ - 1; l >= 0; --l) {
    x = up_[static_cast<size_t>(l)]->forward(x);
    if (skips_) x = torch::cat({x, skip[static_cast<size_t>(l)]}, 1);
    x = dec_[static_cast<size_t>(l)]->forward(x);
  }
  return out_->forward(x);
}

}  // namespace recofold::internal
