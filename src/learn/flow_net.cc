// SPDX-License-Identifier: Apache-2.0
// The normalising flow (torch module): affine couplings, actnorm, invertible 1x1 convolutions, squeeze/split.
#include "flow_net.h"

#include <cmath>

#include "recofold/core/error.h"

namespace recofold::internal {

using torch::indexing::Slice;

torch::Tensor squeeze2(const torch::Tensor& x) {
  const int64_t b = x.size(0), c = x.size(1), h = x.size(2), w = x.size(3);
  return x.reshape({b, c, h / 2, 2, w / 2, 2}).permute({0, 1, 3, 5, 2, 4}).reshape({b, 4 * c, h / 2, w / 2});
}

torch::Tensor unsqueeze2(const torch::Tensor& x) {
  const int64_t b = x.size(0), c = x.size(1) / 4, h = x.size(2), w = x.size(3);
  return x.reshape({b, c, 2, 2, h, w}).permute({0, 1, 4, 2, 5, 3}).reshape({b, c, 2 * h, 2 * w});
}

FlowStepImpl::FlowStepImpl(Kind kind, int channels, int64_t h, int64_t w, int parity, const FlowArchitecture& arch)
    : kind_(kind), c_(channels), h_(h), w_(w) {
  actnorm_ = arch.actnorm;
  invconv_ = kind == Kind::kChannel && arch.mixing == FlowMixing::kInvConv;
  reverse_ = kind == Kind::kChannel && arch.mixing == FlowMixing::kReverse;
  if (kind == Kind::kCheckerboard) {
    c_cond_ = c_;
    c_t_ = c_;
    torch::Tensor mask = torch::empty({1, 1, h, w});
    float* m = mask.data_ptr<float>();
    for (int64_t i = 0; i < h; ++i)
      for (int64_t j = 0; j < w; ++j) m[i * w + j] = ((i + j + parity) % 2 == 0) ? 1.0f : 0.0f;
    mask_ = register_buffer("mask", mask);
  } else {
    c_cond_ = c_ / 2;
    c_t_ = c_ - c_cond_;
  }
  if (actnorm_) {
    an_bias_ = register_parameter("an_bias", torch::zeros({c_}));
    an_logs_ = register_parameter("an_logs", torch::zeros({c_}));
  }
  if (invconv_) {
    mix_lower_ = register_parameter("mix_lower", torch::zeros({c_, c_}));
    mix_upper_ = register_parameter("mix_upper", torch::zeros({c_, c_}));
    mix_log_s_ = register_parameter("mix_log_s", torch::zeros({c_}));
    // Constant buffers (not parameters: the model file does not store them).
    lower_mask_ = register_buffer("lower_mask", torch::tril(torch::ones({c_, c_}), -1));
    upper_mask_ = register_buffer("upper_mask", torch::triu(torch::ones({c_, c_}), 1));
    reversal_ = register_buffer("reversal", torch::flip(torch::eye(c_), {1}));
  }
  const int in = kind == Kind::kCheckerboard ? c_ + 1 : c_cond_;
  nn_ = torch::nn::Sequential(torch::nn::Conv2d(torch::nn::Conv2dOptions(in, arch.width, 3).padding(1)),
                              torch::nn::ReLU(),
                              torch::nn::Conv2d(torch::nn::Conv2dOptions(arch.width, arch.width, 1)),
                              torch::nn::ReLU(),
                              torch::nn::Conv2d(torch::nn::Conv2dOptions(arch.width, 2 * c_t_, 3).padding(1)));
  {
    torch::NoGradGuard ng;
    for (auto& p : nn_[4]->parameters()) p.zero_();
  }
  register_module("nn", nn_);
  s_scale_ = register_parameter("s_scale", torch::ones({c_t_}));
}

torch::Tensor FlowStepImpl::mixing_weight() const {
  torch::Tensor l = mix_lower_ * lower_mask_ + torch::eye(c_, mix_lower_.options());
  torch::Tensor u = mix_upper_ * upper_mask_ + torch::diag(torch::exp(mix_log_s_));
  return torch::matmul(reversal_, torch::matmul(l, u));
}

torch::Tensor FlowStepImpl::coupling(const torch::Tensor& x, torch::Tensor* logdet, bool inverse) {
  const auto view = [](const torch::Tensor& v) { return v.reshape({1, -1, 1, 1}); };
  if (kind_ == Kind::kCheckerboard) {
    torch::Tensor m = mask_;
    torch::Tensor xm = x * m;
    torch::Tensor in = torch::cat({xm, m.expand({x.size(0), 1, h_, w_})}, 1);
    torch::Tensor out = nn_->forward(in);
    torch::Tensor s = view(s_scale_) * torch::tanh(out.index({Slice(), Slice(0, c_t_)}));
    torch::Tensor t = out.index({Slice(), Slice(c_t_, 2 * c_t_)});
    torch::Tensor im = 1 - m;
    if (inverse) return xm + im * ((x - t) * torch::exp(-s));
    *logdet = *logdet + (im * s).sum({1, 2, 3});
    return xm + im * (x * torch::exp(s) + t);
  }
  torch::Tensor x1 = x.index({Slice(), Slice(0, c_cond_)});
  torch::Tensor x2 = x.index({Slice(), Slice(c_cond_, c_)});
  torch::Tensor out = nn_->forward(x1);
  torch::Tensor s = view(s_scale_) * torch::tanh(out.index({Slice(), Slice(0, c_t_)}));
  torch::Tensor t = out.index({Slice(), Slice(c_t_, 2 * c_t_)});
  if (inverse) return torch::cat({x1, (x2 - t) * torch::exp(-s)}, 1);
  *logdet = *logdet + s.sum({1, 2, 3});
  return torch::cat({x1, x2 * torch::exp(s) + t}, 1);
}

torch::Tensor FlowStepImpl::forward(const torch::Tensor& x_in, torch::Tensor& logdet) {
  torch::Tensor x = x_in;
  const double hw = double(h_ * w_);
  if (actnorm_) {
    x = (x + an_bias_.reshape({1, -1, 1, 1})) * torch::exp(an_logs_).reshape({1, -1, 1, 1});
    logdet = logdet + hw * an_logs_.sum();
  }
  if (invconv_) {
    x = torch::conv2d(x, mixing_weight().reshape({c_, c_, 1, 1}));
    logdet = logdet + hw * mix_log_s_.sum();
  } else if (reverse_) {
    x = torch::flip(x, {1});
  }
  return coupling(x, &logdet, false);
}

torch::Tensor FlowStepImpl::inverse(const torch::Tensor& y) {
  torch::Tensor x = coupling(y, nullptr, true);
  if (invconv_) {
    torch::Tensor winv = torch::inverse(mixing_weight().to(torch::kFloat64)).to(y.scalar_type());
    x = torch::conv2d(x, winv.reshape({c_, c_, 1, 1}));
  } else if (reverse_) {
    x = torch::flip(x, {1});
  }
  if (actnorm_) x = x * torch::exp(-an_logs_).reshape({1, -1, 1, 1}) - an_bias_.reshape({1, -1, 1, 1});
  return x;
}

torch::Tensor FlowStepImpl::initialize(const torch::Tensor& x) {
  torch::NoGradGuard ng;
  if (actnorm_) {
    torch::Tensor mean = x.mean({0, 2, 3});
    torch::Tensor sd = (x - mean.reshape({1, -1, 1, 1})).pow(2).mean({0, 2, 3}).sqrt();
    an_bias_.copy_(-mean);
    an_logs_.copy_(-torch::log(sd + 1e-6));
  }
  torch::Tensor logdet = torch::zeros({x.size(0)}, x.options());
  return forward(x, logdet);
}

FlowNetImpl::FlowNetImpl(const FlowArchitecture& arch) : arch_(arch) {
  const auto errors = arch.validate();
  RECOFOLD_CHECK(errors.empty()) << "FlowNet with an invalid architecture: " << errors.front();
  int c = arch.channels;
  int64_t h = arch.ny, w = arch.nx;
  auto add_steps = [&](FlowStepImpl::Kind kind) {
    for (int i = 0; i < arch.couplings; ++i) {
      const int idx = static_cast<int>(steps_.size());
      steps_.push_back(register_module("step" + std::to_string(idx), FlowStep(kind, c, h, w, i % 2, arch)));
      plan_.push_back({PlanItem::Op::kStep, idx, 0});
    }
  };
  for (int s = 0; s < arch.scales; ++s) {
    if (h * w > 1) add_steps(FlowStepImpl::Kind::kCheckerboard);
    if (s < arch.scales - 1) {
      plan_.push_back({PlanItem::Op::kSqueeze, -1, 0});
      c *= 4;
      h /= 2;
      w /= 2;
      add_steps(FlowStepImpl::Kind::kChannel);
      plan_.push_back({PlanItem::Op::kSplit, -1, c / 2});
      c -= c / 2;
    } else if (c >= 2) {
      add_steps(FlowStepImpl::Kind::kChannel);
    }
  }
}

torch::Tensor FlowNetImpl::run_forward(const torch::Tensor& x_in, torch::Tensor* logdet, bool init) {
  RECOFOLD_CHECK(x_in.dim() == 4 && x_in.size(1) == arch_.channels && x_in.size(2) == arch_.ny &&
                 x_in.size(3) == arch_.nx)
      << "flow input of shape " << x_in.sizes() << " for " << arch_.describe();
  const int64_t b = x_in.size(0);
  torch::Tensor x = (x_in - arch_.data_shift) / arch_.data_scale;
  *logdet = torch::full({b}, -double(arch_.dimension()) * std::log(arch_.data_scale), x.options());
  std::vector<torch::Tensor> parts;
  for (const PlanItem& item : plan_) {
    switch (item.op) {
      case PlanItem::Op::kStep:
        x = init ? steps_[static_cast<size_t>(item.step)]->initialize(x)
                 : steps_[static_cast<size_t>(item.step)]->forward(x, *logdet);
        break;
      case PlanItem::Op::kSqueeze:
        x = squeeze2(x);
        break;
      case PlanItem::Op::kSplit:
        parts.push_back(x.index({Slice(), Slice(0, item.channels)}).reshape({b, -1}));
        x = x.index({Slice(), Slice(item.channels, torch::indexing::None)});
        break;
    }
  }
  parts.push_back(x.reshape({b, -1}));
  return torch::cat(parts, 1);
}

torch::ScalarType FlowNetImpl::dtype() const { return parameters().front().scalar_type(); }

std::pair<torch::Tensor, torch::Tensor> FlowNetImpl::forward(const torch::Tensor& x) {
  torch::Tensor logdet;
  torch::Tensor z = run_forward(x, &logdet, false);
  return {z, logdet};
}

void FlowNetImpl::initialize(const torch::Tensor& x) {
  torch::NoGradGuard ng;
  torch::Tensor logdet;
  run_forward(x, &logdet, true);
}

torch::Tensor FlowNetImpl::log_prob(const torch::Tensor& x) {
  auto [z, logdet] = forward(x);
  const double d = double(z.size(1));
  return -0.5 * z.pow(2).sum(1) - 0.5 * d * std::log(2 * 3.14159265358979323846) + logdet;
}

torch::Tensor FlowNetImpl::inverse(const torch::Tensor& z) {
  const int64_t b = z.size(0);
  RECOFOLD_CHECK(z.dim() == 2 && z.size(1) == arch_.dimension()) << "latent of shape " << z.sizes();
  // Shapes of the latent parts, replaying the plan.
  struct Part {
    int64_t offset, c, h, w;
  };
  std::vector<Part> splits;
  int64_t c = arch_.channels, h = arch_.ny, w = arch_.nx, offset = 0;
  for (const PlanItem& item : plan_) {
    if (item.op == PlanItem::Op::kSqueeze) {
      c *= 4;
      h /= 2;
      w /= 2;
    } else if (item.op == PlanItem::Op::kSplit) {
      splits.push_back({offset, item.channels, h, w});
      offset += item.channels * h * w;
      c -= item.channels;
    }
  }
  torch::Tensor x = z.index({Slice(), Slice(offset, torch::indexing::None)}).reshape({b, c, h, w});
  size_t split = splits.size();
  for (auto it = plan_.rbegin(); it != plan_.rend(); ++it) {
    switch (it->op) {
      case PlanItem::Op::kStep:
        x = steps_[static_cast<size_t>(it->step)]->inverse(x);
        break;
      case PlanItem::Op::kSqueeze:
        x = unsqueeze2(x);
        break;
      case PlanItem::Op::kSplit: {
        const Part& p = splits[--split];
        torch::Tensor part = z.index({Slice(), Slice(p.offset, p.offset + p.c * p.h * p.w)}).reshape({b, p.c, p.h, p.w});
        x = torch::cat({part, x}, 1);
        break;
      }
    }
  }
  return x * arch_.data_scale + arch_.data_shift;
}

}  // namespace recofold::internal
