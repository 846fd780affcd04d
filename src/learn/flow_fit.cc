// SPDX-License-Identifier: Apache-2.0
// Maximum-likelihood fitting of a flow to fixed samples (Adam, cosine schedule).
#include "flow_fit.h"

#include <ATen/CPUGeneratorImpl.h>

#include <cmath>

#include "recofold/core/error.h"
#include "unrolled_net.h"

namespace recofold::internal {

double cosine_rate(double lr, double final_fraction, int64_t step, int64_t steps) {
  const double t = double(step) / double(std::max<int64_t>(1, steps));
  return lr * (final_fraction + (1 - final_fraction) * 0.5 * (1 + std::cos(3.14159265358979323846 * t)));
}

std::vector<double> fit_flow(FlowNetImpl& net, const torch::Tensor& samples, const FlowFitOptions& o) {
  RECOFOLD_CHECK(samples.dim() == 4 && samples.size(0) >= 1);
  const int64_t n = samples.size(0);
  at::Generator gen = at::make_generator<at::CPUGeneratorImpl>(o.seed);
  net.initialize(samples.index({torch::indexing::Slice(0, std::min<int64_t>(n, 512))}));
  std::vector<std::pair<std::string, torch::Tensor>> params;
  for (const auto& item : net.named_parameters()) params.emplace_back(item.key(), item.value());
  AdamState adam = make_adam_state(params);
  std::vector<double> losses;
  losses.reserve(static_cast<size_t>(o.steps));
  for (int64_t step = 0; step < o.steps; ++step) {
    torch::Tensor idx = torch::randint(n, {o.batch}, gen, torch::kInt64);
    torch::Tensor x = samples.index_select(0, idx);
    if (o.dequant > 0) x = x + (torch::rand(x.sizes(), gen) - 0.5) * o.dequant;
    for (auto& p : params)
      if (p.second.grad().defined()) p.second.grad().zero_();
    torch::Tensor loss = -net.log_prob(x).mean();
    loss.backward();
    const double v = loss.item<double>();
    if (!std::isfinite(v)) throw WorkError("flow fit: the loss is not finite at step " + std::to_string(step));
    losses.push_back(v);
    adam_step(params, adam, cosine_rate(o.learning_rate, o.lr_final_fraction, step, o.steps), step + 1, o.clip_norm);
  }
  return losses;
}

}  // namespace recofold::internal
