// SPDX-License-Identifier: Apache-2.0
// Trainer of learned unrolled models: on-the-fly data, Adam, validation, checkpoints, exact resume.
#include "recofold/learn/trainer.h"

#include <omp.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <memory>
#include <vector>

#include "model_state.h"
#include "train_support.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/number_format.h"
#include "recofold/core/provenance.h"
#include "recofold/learn/model.h"
#include "recofold/learn/training_data.h"
#include "recofold/ops/fft.h"

namespace recofold {

namespace {

using internal::PreparedBatch;

constexpr uint64_t kValidationStream = 0x9E3779B97F4A7C15ull;  // validation seed = seed + this

double learning_rate(const TrainOptions& o, int64_t step) { return internal::scheduled_learning_rate(o, step); }

// SSIM of magnitude images [B, ny, nx] with a Gaussian window (11, sigma 1.5)
// and peak `range` [B] (Wang et al., IEEE TIP 13, 2004); mean over valid windows.
torch::Tensor ssim(const torch::Tensor& x, const torch::Tensor& y, const torch::Tensor& range) {
  const int w = 11;
  torch::Tensor g = torch::arange(w, torch::kFloat32) - (w - 1) / 2.0;
  g = torch::exp(-g.pow(2) / (2 * 1.5 * 1.5));
  g = g / g.sum();
  torch::Tensor k = (g.unsqueeze(1) * g.unsqueeze(0)).reshape({1, 1, w, w});
  auto f = [&](const torch::Tensor& t) { return torch::conv2d(t.unsqueeze(1), k); };
  torch::Tensor mx = f(x), my = f(y);
  torch::Tensor sxx = f(x * x) - mx * mx, syy = f(y * y) - my * my, sxy = f(x * y) - mx * my;
  torch::Tensor l = range.reshape({-1, 1, 1, 1});
  torch::Tensor c1 = (0.01 * l).pow(2), c2 = (0.03 * l).pow(2);
  torch::Tensor map = ((2 * mx * my + c1) * (2 * sxy + c2)) / ((mx * mx + my * my + c1) * (sxx + syy + c2));
  return map.mean({1, 2, 3});
}

// Per-image PSNR (peak = max |truth|) of magnitudes [B, ny, nx].
torch::Tensor psnr(const torch::Tensor& x, const torch::Tensor& truth) {
  torch::Tensor mse = (x - truth).pow(2).mean({1, 2});
  torch::Tensor peak = std::get<0>(truth.reshape({truth.size(0), -1}).max(1));
  return 10 * torch::log10(peak.pow(2) / mse.clamp_min(1e-20));
}

std::vector<Measurement> draw_examples(const TrainingConditions& c, uint64_t seed, uint64_t first, int count) {
  std::vector<Measurement> out(static_cast<size_t>(count));
#pragma omp parallel for schedule(dynamic) if (count > 1)
  for (int j = 0; j < count; ++j) out[static_cast<size_t>(j)] = draw_training_example(c, seed, first + static_cast<uint64_t>(j));
  return out;
}

PreparedBatch prepare(const std::vector<Measurement>& ms, const UnrolledArchitecture& a) {
  std::vector<const Measurement*> p;
  for (const auto& m : ms) p.push_back(&m);
  return internal::prepare_batch(p, a);
}

struct Validation {
  std::vector<PreparedBatch> batches;
  double baseline_psnr = 0;
};

struct Scores {
  double psnr = 0, ssim = 0;
};

Scores validate(internal::UnrolledNetImpl& net, const Validation& v) {
  torch::NoGradGuard no_grad;
  double p = 0, s = 0;
  int64_t n = 0;
  for (const auto& b : v.batches) {
    torch::Tensor mag = internal::magnitude(net.forward(b.data, b.ops));
    torch::Tensor peak = std::get<0>(b.truth.reshape({b.truth.size(0), -1}).max(1));
    p += psnr(mag, b.truth).sum().item<double>();
    s += ssim(mag, b.truth, peak).sum().item<double>();
    n += b.truth.size(0);
  }
  return {p / double(n), s / double(n)};
}

std::vector<std::pair<std::string, torch::Tensor>> adam_tensors(const std::vector<std::pair<std::string, torch::Tensor>>& params,
                                                                const std::vector<torch::Tensor>& state) {
  std::vector<std::pair<std::string, torch::Tensor>> out;
  for (size_t i = 0; i < params.size(); ++i) out.emplace_back(params[i].first, state[i]);
  return out;
}

void write_checkpoint(const std::string& path, const internal::ModelState& s, const internal::AdamState& adam, int64_t step,
                      const std::string& config_text, double elapsed) {
  H5Writer w(path);
  internal::write_model_groups(w, s);
  const auto params = internal::named_parameters(s);
  internal::write_tensors(w, "/train/adam_m", adam_tensors(params, adam.m));
  internal::write_tensors(w, "/train/adam_v", adam_tensors(params, adam.v));
  w.write_attr("/train", "step", step);
  w.write_attr("/train", "config", config_text);
  w.write_attr("/train", "elapsed_seconds", elapsed);
  w.commit();
}

}  // namespace

namespace internal {

double scheduled_learning_rate(const TrainOptions& o, int64_t step) {
  double lr = o.learning_rate;
  if (o.schedule == "cosine") {
    const double t = double(step) / double(std::max<int64_t>(1, o.steps));
    const double f = o.lr_final_fraction;
    lr *= f + (1 - f) * 0.5 * (1 + std::cos(3.14159265358979323846 * t));
  } else if (o.schedule == "step") {
    lr *= std::pow(0.5, double(step / o.step_every));
  }
  if (o.warmup_steps > 0 && step < o.warmup_steps) lr *= double(step + 1) / double(o.warmup_steps);
  return lr;
}

CheckpointPosition read_checkpoint(const std::string& path, const std::string& config_text,
                                   const std::string& config_file,
                                   const std::vector<std::pair<std::string, torch::Tensor>>& params, AdamState& adam) {
  if (!file_exists(path)) throw InputError(path, "resume", "no checkpoint to resume from");
  H5Reader r(path);
  if (!r.has_attr("/train", "config") || r.attr_string("/train", "config") != config_text)
    throw InputError(path, "/train@config", "the checkpoint was made with a different config than " + config_file);
  read_tensors(r, "/model/parameters", params);
  read_tensors(r, "/train/adam_m", adam_tensors(params, adam.m));
  read_tensors(r, "/train/adam_v", adam_tensors(params, adam.v));
  return {r.attr_int("/train", "step"), r.attr_double("/train", "elapsed_seconds")};
}

std::vector<SeedRange> training_seed_ranges(const TrainingConfig& cfg, int64_t steps_done) {
  std::vector<SeedRange> out;
  if (steps_done > 0)
    out.push_back({"train", cfg.data.families, cfg.train.seed, 0, static_cast<uint64_t>(steps_done * cfg.train.batch - 1)});
  out.push_back({"validation", cfg.data.families, validation_seed(cfg.train.seed), 0,
                 static_cast<uint64_t>(cfg.train.validation_count - 1)});
  return out;
}

}  // namespace internal

uint64_t validation_seed(uint64_t seed) { return (seed + kValidationStream) & ((uint64_t{1} << 53) - 1); }

std::string checkpoint_path(const std::string& out) {
  std::string base = out;
  if (base.size() > 3 && base.compare(base.size() - 3, 3, ".h5") == 0) base.resize(base.size() - 3);
  return base + ".checkpoint.h5";
}

namespace {

// Initial state of a run: a flow prior starts from the trained flow named by model.flow_model;
// --resume reads parameters, Adam moments, step and elapsed time from the checkpoint.
void start_or_resume(const TrainingConfig& cfg, const TrainRun& run, const std::string& checkpoint,
                     internal::ModelState& state, std::vector<std::pair<std::string, torch::Tensor>>& params,
                     internal::AdamState& adam, int64_t& step, double& elapsed_before) {
  if (cfg.architecture.prior == LearnedPriorKind::kFlow && !run.resume) {
    H5Reader fr(cfg.flow_model);
    std::vector<std::pair<std::string, torch::Tensor>> flow_params;
    for (const auto& item : state.net->flow()->named_parameters()) flow_params.emplace_back(item.key(), item.value());
    internal::read_tensors(fr, "/model/parameters", flow_params);
  }
  if (!run.resume) return;
  const internal::CheckpointPosition at = internal::read_checkpoint(checkpoint, cfg.text, cfg.file, params, adam);
  step = at.step;
  elapsed_before = at.elapsed_seconds;
}

// The fixed validation set and its baseline (A^H y of the scaled operator).
Validation make_validation(const TrainingConfig& cfg) {
  const TrainOptions& o = cfg.train;
  Validation val;
  const uint64_t vseed = validation_seed(o.seed);
  double base = 0;
  for (int first = 0; first < o.validation_count; first += o.batch) {
    const int count = std::min(o.batch, o.validation_count - first);
    PreparedBatch b = prepare(draw_examples(cfg.data, vseed, static_cast<uint64_t>(first), count), cfg.architecture);
    torch::NoGradGuard no_grad;
    torch::Tensor zf = internal::magnitude(internal::op_adjoint(b.data, b.ops));
    base += psnr(zf, b.truth).sum().item<double>();
    val.batches.push_back(std::move(b));
  }
  val.baseline_psnr = base / double(o.validation_count);
  return val;
}

// One Adam step on the batch of `step`; returns the loss.
double training_step(const TrainingConfig& cfg, internal::UnrolledNetImpl& net,
                     std::vector<std::pair<std::string, torch::Tensor>>& params, internal::AdamState& adam,
                     int64_t step) {
  const TrainOptions& o = cfg.train;
  PreparedBatch b = prepare(draw_examples(cfg.data, o.seed, static_cast<uint64_t>(step) * o.batch, o.batch), cfg.architecture);
  torch::Tensor mag = internal::magnitude(net.forward(b.data, b.ops));
  torch::Tensor loss = o.loss == "l1" ? (mag - b.truth).abs().mean() : (mag - b.truth).pow(2).mean();
  if (o.ssim_weight > 0) {
    torch::Tensor peak = std::get<0>(b.truth.reshape({b.truth.size(0), -1}).max(1));
    loss = loss + o.ssim_weight * (1 - ssim(mag, b.truth, peak).mean());
  }
  for (auto& p : params)
    if (p.second.grad().defined()) p.second.grad().zero_();
  loss.backward();
  const double value = loss.item<double>();
  if (!std::isfinite(value))
    throw WorkError("training loss is not finite at step " + std::to_string(step) + "; lower train.learning_rate");
  internal::adam_step(params, adam, learning_rate(o, step), step + 1, o.clip_norm);
  return value;
}

// What the saved model says about its training: conditions, seeds, scores, provenance.
void record_training(ModelInfo& info, const TrainingConfig& cfg, const TrainRun& run, const TrainResult& result,
                     double total_seconds) {
  info.trained_on = cfg.data;
  info.trained_on->seeds = internal::training_seed_ranges(cfg, result.steps_done);
  if (!cfg.flow_model.empty()) {
    info.provenance.extra["flow_model"] = cfg.flow_model;
    info.provenance.extra["flow_model_checksum"] = file_checksum(cfg.flow_model);
  }
  info.config_text = cfg.text;
  info.metrics["val_psnr_db"] = result.val_psnr_db;
  info.metrics["val_ssim"] = result.val_ssim;
  info.metrics["val_psnr_baseline_db"] = result.val_psnr_baseline_db;
  info.metrics["steps"] = double(result.steps_done);
  info.metrics["train_loss"] = result.final_loss;
  info.metrics["train_seconds"] = total_seconds;
  info.provenance.command = run.command;
  info.provenance.extra["seed"] = std::to_string(cfg.train.seed);
  info.provenance.extra["config_file"] = cfg.file;
}

}  // namespace

TrainResult train_unrolled_model(const TrainingConfig& cfg, const TrainRun& run) {
  const auto t_start = std::chrono::steady_clock::now();
  auto seconds_since = [](std::chrono::steady_clock::time_point t) {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - t).count();
  };
  const TrainOptions& o = cfg.train;
  const UnrolledArchitecture& arch = cfg.architecture;
  const internal::TrainingThreadScope thread_scope(o.threads);  // restored on return

  TrainResult result;
  result.checkpoint = checkpoint_path(run.out);
  UnrolledModel model(arch, o.seed);
  internal::ModelState& state = model.state();
  auto params = internal::named_parameters(state);
  internal::AdamState adam = internal::make_adam_state(params);
  int64_t step = 0;
  double elapsed_before = 0;
  start_or_resume(cfg, run, result.checkpoint, state, params, adam, step, elapsed_before);

  const Validation val = make_validation(cfg);
  result.val_psnr_baseline_db = val.baseline_psnr;

  internal::UnrolledNetImpl& net = *state.net;
  Scores last_scores{};
  bool have_scores = false;
  double loss_value = 0;
  const auto t_loop = std::chrono::steady_clock::now();
  const int64_t first_step = step;
  auto status = [&]() {
    std::string s = "loss " + format_sig(loss_value, 3);
    if (have_scores) s += ", val " + format_fixed(last_scores.psnr, 2) + " dB (A^H y " + format_fixed(val.baseline_psnr, 2) + ")";
    const double dt = seconds_since(t_loop);
    if (step > first_step && dt > 0) s += ", " + format_fixed(double((step - first_step) * o.batch) / dt, 1) + " ex/s";
    return s;
  };

  while (step < o.steps) {
    const bool stop_requested = (run.stop && run.stop->load()) ||
                                (run.stop_after_steps > 0 && step >= run.stop_after_steps);
    if (stop_requested) {
      write_checkpoint(result.checkpoint, state, adam, step, cfg.text, elapsed_before + seconds_since(t_start));
      result.interrupted = true;
      result.steps_done = step;
      result.final_loss = loss_value;
      result.seconds = seconds_since(t_start);
      if (run.progress) run.progress->finish("interrupted at step " + std::to_string(step) + "; checkpoint " + result.checkpoint);
      return result;
    }
    if (o.max_minutes > 0 && seconds_since(t_start) > o.max_minutes * 60) {
      result.time_limit_reached = true;
      break;
    }
    loss_value = training_step(cfg, net, params, adam, step);
    ++step;
    if (step % o.validation_every == 0 || step == o.steps) {
      last_scores = validate(net, val);
      have_scores = true;
    }
    if (step % o.checkpoint_every == 0 && step < o.steps)
      write_checkpoint(result.checkpoint, state, adam, step, cfg.text, elapsed_before + seconds_since(t_start));
    if (run.progress) run.progress->update(step, o.steps, status());
  }

  if (!have_scores || result.time_limit_reached) last_scores = validate(net, val);
  result.steps_done = step;
  result.val_psnr_db = last_scores.psnr;
  result.val_ssim = last_scores.ssim;
  result.final_loss = loss_value;
  result.seconds = seconds_since(t_start);

  record_training(state.info, cfg, run, result, elapsed_before + result.seconds);
  model.save(run.out);
  if (file_exists(result.checkpoint)) std::remove(result.checkpoint.c_str());
  remove_orphaned_temporaries(result.checkpoint);  // a run killed while writing one
  if (run.progress) run.progress->finish(status());
  return result;
}

}  // namespace recofold
