// SPDX-License-Identifier: Apache-2.0
// The learned unrolled network (torch module) and batch preparation from measurements.
#include "unrolled_net.h"

#include <cmath>

#include "learned_tv.h"
#include "recofold/core/error.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/recon/forward_model.h"

namespace recofold::internal {

PreparedBatch prepare_batch(const std::vector<const Measurement*>& ms, const UnrolledArchitecture& arch,
                            const std::string& file) {
  RECOFOLD_CHECK(!ms.empty());
  std::vector<std::shared_ptr<const LinearOperator>> ops;
  std::vector<VecC> data;
  bool all_truth = true;
  for (const Measurement* m : ms) {
    if (m->modality != arch.modality)
      throw InputError(file, "modality",
                       "the model reconstructs " + std::string(to_string(arch.modality)) +
                           " data, the measurement is " + std::string(to_string(m->modality)));
    if (m->ny != arch.ny || m->nx != arch.nx)
      throw InputError(file, "image size",
                       "the model was built for " + std::to_string(arch.ny) + "x" + std::to_string(arch.nx) +
                           ", the measurement's grid is " + std::to_string(m->ny) + "x" + std::to_string(m->nx));
    if (arch.modality == Modality::kMri) {
      if (!m->mri) throw InputError(file, "/mri", "missing MRI data");
      if (m->mri->non_cartesian()) {
        // A trajectory: the SENSE-NUFFT of the measurement (Toeplitz normal operator) in every DC step.
        if (arch.dc == LearnedDc::kReplace)
          throw InputError(file, "/mri/trajectory",
                           "dc 'replace' overwrites sampled Cartesian k-space; a model with dc 'replace' cannot "
                           "reconstruct non-Cartesian samples (models with dc 'gradient' or 'cg' can)");
        ForwardModel fm = make_forward_model(*m, file);
        data.push_back(std::move(fm.y));
        ops.push_back(std::shared_ptr<const LinearOperator>(std::move(fm.op)));
        all_truth = all_truth && m->truth.has_value();
        continue;
      }
      auto op = make_sense_operator(*m->mri, file);
      if (arch.dc == LearnedDc::kReplace && op->coils() != 1)
        throw InputError(file, "/mri/kspace", "dc 'replace' needs single-coil data, got " +
                                                   std::to_string(op->coils()) + " coils");
      data.push_back(kspace_vector(*m->mri));
      ops.push_back(std::move(op));
    } else if (arch.modality == Modality::kDenoise || arch.modality == Modality::kInpaint) {
      // y = M x + n on the image grid: the measurement's own forward model (identity or pixel mask).
      if (!m->image) throw InputError(file, "/image", "missing the observed image");
      ForwardModel fm = make_forward_model(*m, file);
      data.push_back(std::move(fm.y));
      ops.push_back(std::shared_ptr<const LinearOperator>(std::move(fm.op)));
    } else {
      if (!m->ct) throw InputError(file, "/ct", "missing CT data");
      ops.push_back(make_ct_operator(*m, file));
      data.push_back(ct_sinogram_vector(*m));
    }
    all_truth = all_truth && m->truth.has_value();
  }
  PreparedBatch p;
  p.ops = make_operator_batch(std::move(ops));
  const int64_t nb = p.ops.size();
  if (arch.dc != LearnedDc::kReplace) {
#pragma omp parallel for schedule(static) if (nb > 1)
    for (int64_t b = 0; b < nb; ++b) {
      const double l = estimate_norm_squared(*p.ops.ops[static_cast<size_t>(b)], 20, 1);
      p.ops.scale[static_cast<size_t>(b)] = l > 0 ? static_cast<float>(1.0 / std::sqrt(l)) : 1.0f;
    }
  }
  const Index r = p.ops.range_size;
  p.data = torch::zeros({nb, 2, r});
  float* dp = p.data.data_ptr<float>();
  for (int64_t b = 0; b < nb; ++b) {
    const VecC& y = data[static_cast<size_t>(b)];
    const float s = p.ops.scale[static_cast<size_t>(b)];
    for (Index i = 0; i < y.size(); ++i) {
      dp[b * 2 * r + i] = s * y[i].real();
      dp[b * 2 * r + r + i] = s * y[i].imag();
    }
  }
  if (all_truth) {
    p.truth = torch::empty({nb, arch.ny, arch.nx});
    float* tp = p.truth.data_ptr<float>();
    const Index n = arch.ny * arch.nx;
    for (int64_t b = 0; b < nb; ++b)
      for (Index i = 0; i < n; ++i) tp[b * n + i] = std::abs(ms[static_cast<size_t>(b)]->truth->data[static_cast<size_t>(i)]);
  }
  return p;
}

UnrolledNetImpl::UnrolledNetImpl(const UnrolledArchitecture& arch) : arch_(arch) {
  const int k_count = arch.iterations;
  if (arch.prior == LearnedPriorKind::kCnn) {
    const int nets = arch.shared_weights ? 1 : k_count;
    for (int k = 0; k < nets; ++k) {
      torch::nn::Sequential seq;
      const int pad = arch.kernel / 2;
      for (int l = 0; l < arch.depth; ++l) {
        const int in = l == 0 ? 2 : arch.width;
        const int out = l == arch.depth - 1 ? 2 : arch.width;
        torch::nn::Conv2d conv(torch::nn::Conv2dOptions(in, out, arch.kernel).padding(pad).bias(true));
        if (l == arch.depth - 1 && arch.zero_last_layer) {
          // The residual branch starts at zero, so the untrained network is
          // the classical scheme with a zero prior step and training only improves on it.
          torch::NoGradGuard no_grad;
          conv->weight.zero_();
          conv->bias.zero_();
        }
        seq->push_back(conv);
        if (l != arch.depth - 1) seq->push_back(torch::nn::ReLU());
      }
      cnn_.push_back(register_module("cnn" + std::to_string(k), seq));
    }
  } else if (arch.prior == LearnedPriorKind::kUnet) {
    const int nets = arch.shared_weights ? 1 : k_count;
    for (int k = 0; k < nets; ++k)
      unet_.push_back(register_module("unet" + std::to_string(k),
                                      UNet(2, 2, arch.depth, arch.width, arch.skips, arch.zero_last_layer)));
  } else if (arch.prior == LearnedPriorKind::kTv) {
    tv_log_theta_ = register_parameter("tv_log_theta", torch::full({k_count}, std::log(arch.init_threshold)));
  } else if (arch.prior == LearnedPriorKind::kFlow) {
    RECOFOLD_CHECK(arch.flow.has_value()) << "prior flow without a flow architecture";
    flow_ = register_module("flow", FlowNet(*arch.flow));
    if (!arch.flow_finetune)
      for (auto& p : flow_->parameters()) p.set_requires_grad(false);
    flow_log_step_ = register_parameter("flow_log_step", torch::full({k_count}, std::log(arch.init_flow_step)));
    flow_log_lambda_ = register_parameter("flow_log_lambda", torch::full({k_count}, std::log(arch.init_flow_lambda)));
  } else {
    auto w = std::make_shared<WaveletTransform>(Shape{arch.ny, arch.nx}, *parse_wavelet(arch.wavelet), arch.levels);
    const std::vector<int> bands = w->band_index();
    const int64_t band_count = static_cast<int64_t>(w->sub_bands().size());
    band_index_ = torch::empty({static_cast<int64_t>(bands.size())}, torch::kInt64);
    for (size_t i = 0; i < bands.size(); ++i) band_index_[static_cast<int64_t>(i)] = bands[i];
    wavelet_ = make_operator_batch({w});
    log_threshold_ = register_parameter("wavelet_log_threshold",
                                        torch::full({k_count, band_count}, std::log(arch.init_threshold)));
  }
  if (arch.dc == LearnedDc::kGradient)
    dc_step_ = register_parameter("dc_step", torch::full({k_count}, arch.init_step));
  if (arch.dc == LearnedDc::kCg)
    dc_log_mu_ = register_parameter("dc_log_mu", torch::full({k_count + 1}, std::log(arch.init_mu)));
}

torch::Tensor UnrolledNetImpl::mu(int k) const { return torch::exp(dc_log_mu_.index({k})); }

const OperatorBatch& UnrolledNetImpl::wavelet_batch(int64_t size) {
  std::lock_guard<std::mutex> lock(wavelet_mutex_);
  auto it = wavelet_batches_.find(size);
  if (it != wavelet_batches_.end()) return it->second;
  OperatorBatch wb = wavelet_;
  wb.ops.assign(static_cast<size_t>(size), wavelet_.ops[0]);
  wb.scale.assign(static_cast<size_t>(size), 1.0f);
  return wavelet_batches_.emplace(size, std::move(wb)).first->second;
}

torch::Tensor UnrolledNetImpl::flow_prior_step(int k, const torch::Tensor& x) {
  // Training (autograd on) keeps the graph of each gradient so the loss
  // reaches eta, lambda (and the flow's weights when fine-tuned) through it;
  // inference only needs the gradient values.
  const bool keep_graph = torch::GradMode::is_enabled();
  torch::AutoGradMode enable(true);
  const torch::Tensor eta = torch::exp(flow_log_step_.index({k}));
  const torch::Tensor lambda = torch::exp(flow_log_lambda_.index({k}));
  const double inv_var = 1.0 / (arch_.flow->imag_sigma * arch_.flow->imag_sigma);
  using torch::indexing::Slice;
  torch::Tensor z = x;
  for (int s = 0; s < arch_.flow_steps; ++s) {
    torch::Tensor re = z.index({Slice(), Slice(0, 1)});
    if (!re.requires_grad()) re = re.detach().requires_grad_(true);
    torch::Tensor nll = -flow_->log_prob(re).sum();
    torch::Tensor g_re = torch::autograd::grad({nll}, {re}, {}, keep_graph, keep_graph)[0];
    torch::Tensor g = torch::cat({g_re, z.index({Slice(), Slice(1, 2)}) * inv_var}, 1);
    z = z - eta * ((z - x) + lambda * g);
    if (!keep_graph) z = z.detach();
  }
  return z;
}

torch::Tensor UnrolledNetImpl::prior_step(int k, const torch::Tensor& x) {
  const size_t net = arch_.shared_weights ? 0 : static_cast<size_t>(k);
  if (arch_.prior == LearnedPriorKind::kCnn) return x + cnn_[net]->forward(x);
  if (arch_.prior == LearnedPriorKind::kUnet) return x + unet_[net]->forward(x);
  if (arch_.prior == LearnedPriorKind::kTv) return tv_prox(x, torch::exp(tv_log_theta_.index({k})), arch_.tv_iterations);
  if (arch_.prior == LearnedPriorKind::kFlow) return flow_prior_step(k, x);
  // z = W^H soft(W x, theta[band]); the wavelet operator is shared by the
  // whole batch, so the batch is folded into the bridge's batch of one.
  const OperatorBatch& wb = wavelet_batch(x.size(0));
  torch::Tensor c = op_apply(x, wb);  // [B, 2, n]
  torch::Tensor theta = torch::exp(log_threshold_.index({k})).index_select(0, band_index_);  // [n]
  torch::Tensor mag = torch::sqrt(c.pow(2).sum(1, true) + 1e-12f);
  torch::Tensor shrunk = c * torch::relu(mag - theta) / mag;
  return op_adjoint(shrunk, wb);
}

torch::Tensor UnrolledNetImpl::forward(const torch::Tensor& data, const OperatorBatch& ops) {
  const torch::Tensor aty = op_adjoint(data, ops);
  torch::Tensor x = arch_.dc == LearnedDc::kCg ? cg_solve(aty, mu(arch_.iterations), ops, arch_.cg_iterations) : aty;
  for (int k = 0; k < arch_.iterations; ++k) {
    torch::Tensor z = prior_step(k, x);
    switch (arch_.dc) {
      case LearnedDc::kGradient:
        x = z - dc_step_.index({k}) * (op_normal(z, ops) - aty);
        break;
      case LearnedDc::kReplace:
        x = z - (op_normal(z, ops) - aty);
        break;
      case LearnedDc::kCg: {
        torch::Tensor m = mu(k);
        x = cg_solve(aty + m * z, m, ops, arch_.cg_iterations);
        break;
      }
    }
  }
  return x;
}

AdamState make_adam_state(const std::vector<std::pair<std::string, torch::Tensor>>& params) {
  AdamState s;
  for (const auto& p : params) {
    s.m.push_back(torch::zeros_like(p.second));
    s.v.push_back(torch::zeros_like(p.second));
  }
  return s;
}

void adam_step(const std::vector<std::pair<std::string, torch::Tensor>>& params, AdamState& state, double lr,
               int64_t t, double clip_norm) {
  constexpr double kBeta1 = 0.9, kBeta2 = 0.999, kEps = 1e-8;
  torch::NoGradGuard no_grad;
  double clip = 1.0;
  if (clip_norm > 0) {
    double total = 0;
    for (const auto& p : params)
      if (p.second.grad().defined()) total += p.second.grad().pow(2).sum().item<double>();
    total = std::sqrt(total);
    if (total > clip_norm) clip = clip_norm / (total + 1e-6);
  }
  const double bc1 = 1 - std::pow(kBeta1, double(t)), bc2 = 1 - std::pow(kBeta2, double(t));
  for (size_t i = 0; i < params.size(); ++i) {
    torch::Tensor g = params[i].second.grad();
    if (!g.defined()) continue;
    if (clip != 1.0) g = g * clip;
    state.m[i].mul_(kBeta1).add_(g, 1 - kBeta1);
    state.v[i].mul_(kBeta2).addcmul_(g, g, 1 - kBeta2);
    torch::Tensor denom = (state.v[i].sqrt() / std::sqrt(bc2)).add_(kEps);
    params[i].second.addcdiv_(state.m[i], denom, -lr / bc1);
  }
}

torch::Tensor magnitude(const torch::Tensor& x) { return torch::sqrt(x.pow(2).sum(1) + 1e-12f); }

}  // namespace recofold::internal
