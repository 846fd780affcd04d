// SPDX-License-Identifier: Apache-2.0
// Trainer of normalising flows: maximum likelihood on phantom images drawn on the fly, checkpoints, exact resume.
#include <ATen/CPUGeneratorImpl.h>
#include <omp.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <vector>

#include "flow_state.h"
#include "model_state.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/learn/flow_model.h"
#include "recofold/learn/trainer.h"
#include "recofold/learn/training_data.h"
#include "recofold/ops/fft.h"
#include "train_support.h"
#include "unrolled_net.h"

namespace recofold {

namespace {


// Images first .. first+count-1 of the stream as [count, 1, ny, nx].
torch::Tensor draw_images(const TrainingConditions& c, uint64_t seed, uint64_t first, int count) {
  torch::Tensor t = torch::empty({count, 1, c.ny, c.nx});
  float* p = t.data_ptr<float>();
  const Index n = c.ny * c.nx;
#pragma omp parallel for schedule(dynamic) if (count > 1)
  for (int j = 0; j < count; ++j) {
    const ImageF img = draw_training_object(c, seed, first + static_cast<uint64_t>(j));
    std::memcpy(p + j * n, img.data(), sizeof(float) * static_cast<size_t>(n));
  }
  return t;
}

// Dequantisation noise of one step: depends on (seed, step) only.
torch::Tensor noise_like(const torch::Tensor& x, double width, uint64_t seed, uint64_t step) {
  at::Generator gen = at::make_generator<at::CPUGeneratorImpl>(seed * 0x9E3779B97F4A7C15ull + step + 1);
  return (torch::rand(x.sizes(), gen) - 0.5) * width;
}

double bits_per_dim_of(double nll_nats_per_dim, double dequant) {
  return (nll_nats_per_dim - std::log(dequant)) / std::log(2.0);
}

void write_flow_checkpoint(const std::string& path, const internal::FlowState& s, const internal::AdamState& adam,
                           int64_t step, const std::string& config_text, double elapsed) {
  H5Writer w(path);
  internal::write_flow_groups(w, s);
  const auto params = internal::named_parameters(s);
  std::vector<std::pair<std::string, torch::Tensor>> m, v;
  for (size_t i = 0; i < params.size(); ++i) {
    m.emplace_back(params[i].first, adam.m[i]);
    v.emplace_back(params[i].first, adam.v[i]);
  }
  internal::write_tensors(w, "/train/adam_m", m);
  internal::write_tensors(w, "/train/adam_v", v);
  w.write_attr("/train", "step", step);
  w.write_attr("/train", "config", config_text);
  w.write_attr("/train", "elapsed_seconds", elapsed);
  w.commit();
}

}  // namespace

namespace {

// The fixed validation images of a flow run, dequantisation noise included.
torch::Tensor flow_validation_set(const TrainingConfig& cfg) {
  const uint64_t vseed = validation_seed(cfg.train.seed);
  torch::Tensor val = draw_images(cfg.data, vseed, 0, cfg.train.validation_count);
  return val + noise_like(val, cfg.flow.dequant, vseed, 0);
}

// Mean bits per dimension of the validation set under the flow.
double validation_bits_per_dim(internal::FlowNetImpl& net, const torch::Tensor& val, const TrainingConfig& cfg) {
  torch::NoGradGuard ng;
  double nll = 0;
  for (int64_t first = 0; first < val.size(0); first += cfg.train.batch) {
    torch::Tensor part = val.index({torch::indexing::Slice(first, std::min<int64_t>(first + cfg.train.batch, val.size(0)))});
    nll += -net.log_prob(part).sum().item<double>();
  }
  return bits_per_dim_of(nll / double(val.size(0)) / double(cfg.flow.dimension()), cfg.flow.dequant);
}

// One Adam step on the batch of `step` (the first batch also initialises the flow); returns
// the loss, -log p per dimension in nats.
double flow_training_step(const TrainingConfig& cfg, internal::FlowNetImpl& net,
                          std::vector<std::pair<std::string, torch::Tensor>>& params, internal::AdamState& adam,
                          int64_t step) {
  const TrainOptions& o = cfg.train;
  torch::Tensor x = draw_images(cfg.data, o.seed, static_cast<uint64_t>(step) * o.batch, o.batch);
  x = x + noise_like(x, cfg.flow.dequant, o.seed, static_cast<uint64_t>(step) + 1);
  if (step == 0) net.initialize(x);
  for (auto& p : params)
    if (p.second.grad().defined()) p.second.grad().zero_();
  torch::Tensor loss = -net.log_prob(x).mean() / double(cfg.flow.dimension());
  loss.backward();
  const double value = loss.item<double>();
  if (!std::isfinite(value))
    throw WorkError("flow training loss is not finite at step " + std::to_string(step) +
                    "; lower train.learning_rate or raise model.dequant");
  internal::adam_step(params, adam, internal::scheduled_learning_rate(o, step), step + 1, o.clip_norm);
  return value;
}

// What the saved flow says about its training: conditions, seeds, scores, provenance.
void record_flow_training(ModelInfo& info, const TrainingConfig& cfg, const TrainRun& run, const TrainResult& result,
                          double total_seconds) {
  info.trained_on = cfg.data;
  info.trained_on->seeds = internal::training_seed_ranges(cfg, result.steps_done);
  info.config_text = cfg.text;
  info.metrics["val_bits_per_dim"] = result.val_bits_per_dim;
  info.metrics["train_bits_per_dim"] = result.train_bits_per_dim;
  info.metrics["steps"] = double(result.steps_done);
  info.metrics["train_seconds"] = total_seconds;
  info.provenance.command = run.command;
  info.provenance.extra["seed"] = std::to_string(cfg.train.seed);
  info.provenance.extra["config_file"] = cfg.file;
}

}  // namespace

TrainResult train_flow_model(const TrainingConfig& cfg, const TrainRun& run) {
  RECOFOLD_CHECK(cfg.kind == "flow");
  const auto t_start = std::chrono::steady_clock::now();
  auto seconds_since = [](std::chrono::steady_clock::time_point t) {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - t).count();
  };
  const TrainOptions& o = cfg.train;
  const FlowArchitecture& arch = cfg.flow;
  const internal::TrainingThreadScope thread_scope(o.threads);  // restored on return

  TrainResult result;
  result.checkpoint = checkpoint_path(run.out);
  FlowModel model(arch, o.seed);
  internal::FlowState& state = model.state();
  internal::FlowNetImpl& net = *state.net;
  auto params = internal::named_parameters(state);
  internal::AdamState adam = internal::make_adam_state(params);
  int64_t step = 0;
  double elapsed_before = 0;
  if (run.resume) {
    const internal::CheckpointPosition at = internal::read_checkpoint(result.checkpoint, cfg.text, cfg.file, params, adam);
    step = at.step;
    elapsed_before = at.elapsed_seconds;
  }

  const torch::Tensor val = flow_validation_set(cfg);
  auto validate = [&]() { return validation_bits_per_dim(net, val, cfg); };

  double loss_value = 0, val_bpd = 0;
  bool have_val = false;
  const auto t_loop = std::chrono::steady_clock::now();
  const int64_t first_step = step;
  auto status = [&]() {
    std::string s = "train " + format_fixed(bits_per_dim_of(loss_value, arch.dequant), 3) + " bits/dim";
    if (have_val) s += ", val " + format_fixed(val_bpd, 3);
    const double dt = seconds_since(t_loop);
    if (step > first_step && dt > 0)
      s += ", " + format_fixed(double((step - first_step) * o.batch) / dt, 1) + " ex/s";
    return s;
  };

  while (step < o.steps) {
    const bool stop_requested =
        (run.stop && run.stop->load()) || (run.stop_after_steps > 0 && step >= run.stop_after_steps);
    if (stop_requested) {
      write_flow_checkpoint(result.checkpoint, state, adam, step, cfg.text, elapsed_before + seconds_since(t_start));
      result.interrupted = true;
      result.steps_done = step;
      result.seconds = seconds_since(t_start);
      if (run.progress)
        run.progress->finish("interrupted at step " + std::to_string(step) + "; checkpoint " + result.checkpoint);
      return result;
    }
    if (o.max_minutes > 0 && seconds_since(t_start) > o.max_minutes * 60) {
      result.time_limit_reached = true;
      break;
    }
    loss_value = flow_training_step(cfg, net, params, adam, step);
    ++step;
    if (step % o.validation_every == 0 || step == o.steps) {
      val_bpd = validate();
      have_val = true;
    }
    if (step % o.checkpoint_every == 0 && step < o.steps)
      write_flow_checkpoint(result.checkpoint, state, adam, step, cfg.text, elapsed_before + seconds_since(t_start));
    if (run.progress) run.progress->update(step, o.steps, status());
  }
  if (!have_val || result.time_limit_reached) val_bpd = validate();

  result.steps_done = step;
  result.val_bits_per_dim = val_bpd;
  result.train_bits_per_dim = bits_per_dim_of(loss_value, arch.dequant);
  result.final_loss = loss_value;
  result.seconds = seconds_since(t_start);
  record_flow_training(state.info, cfg, run, result, elapsed_before + result.seconds);
  model.save(run.out);
  if (file_exists(result.checkpoint)) std::remove(result.checkpoint.c_str());
  remove_orphaned_temporaries(result.checkpoint);  // a run killed while writing one
  if (run.progress) run.progress->finish(status());
  return result;
}

TrainResult train_model(const TrainingConfig& config, const TrainRun& run) {
  return config.kind == "flow" ? train_flow_model(config, run) : train_unrolled_model(config, run);
}

}  // namespace recofold
