// SPDX-License-Identifier: Apache-2.0
// Tests of the learned priors of unrolled models: U-Net, learned TV, flow prior step; gradients, model files.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <algorithm>
#include <functional>
#include <string>
#include <unistd.h>

#include "learn/learned_tv.h"
#include "learn/model_state.h"
#include "learn/unet.h"
#include "learn/unrolled_net.h"
#include "recofold/core/error.h"
#include "recofold/learn/model.h"
#include "recofold/learn/training_data.h"
#include "recofold/priors/tv.h"

namespace recofold {
namespace {

std::string temp_path(const std::string& name) {
  return "/tmp/recofold_learn_priors_test_" + std::to_string(getpid()) + "_" + name;
}

TrainingConditions conditions(Index n = 16) {
  TrainingConditions c;
  c.ny = c.nx = n;
  c.coils_min = c.coils_max = 1;
  return c;
}

FlowArchitecture tiny_flow(Index n = 16) {
  FlowArchitecture f;
  f.ny = f.nx = n;
  f.scales = 2;
  f.couplings = 2;
  f.width = 8;
  return f;
}

UnrolledArchitecture architecture(LearnedPriorKind prior, Index n = 16) {
  UnrolledArchitecture a;
  a.ny = a.nx = n;
  a.iterations = 2;
  a.prior = prior;
  a.dc = LearnedDc::kGradient;
  a.width = 4;
  a.depth = prior == LearnedPriorKind::kUnet ? 2 : 3;
  a.levels = 2;
  a.tv_iterations = 8;
  a.init_threshold = 0.02;
  if (prior == LearnedPriorKind::kFlow) {
    a.flow = tiny_flow(n);
    a.init_flow_lambda = 1e-3;
  }
  return a;
}

// Moves every parameter off its start (zero last layers would hide the
// network from a gradient check of its weights).
void perturb(torch::nn::Module& net, uint64_t seed, double size) {
  torch::manual_seed(seed);
  torch::NoGradGuard ng;
  for (auto& p : net.parameters()) p.add_(torch::randn_like(p) * size);
}

TEST(LearnedTv, GradientAdjointIsTheAdjointOfTheGradient) {
  torch::manual_seed(1);
  torch::Tensor x = torch::randn({2, 2, 7, 9}, torch::kFloat64);
  torch::Tensor p = torch::randn({2, 2, 2, 7, 9}, torch::kFloat64);
  const double lhs = (internal::tv_gradient(x) * p).sum().item<double>();
  const double rhs = (x * internal::tv_gradient_adjoint(p)).sum().item<double>();
  EXPECT_NEAR(lhs, rhs, 1e-10 * std::abs(lhs));
}

// The torch prox and the library's TvPrior (priors/tv.h) solve the same
// problem; with enough inner steps both reach the same objective value.
TEST(LearnedTv, ProxReachesTheObjectiveOfTheLibraryTvProx) {
  const Index n = 24;
  torch::manual_seed(2);
  torch::Tensor v = torch::zeros({1, 2, n, n});
  v.index_put_({0, 0, torch::indexing::Slice(6, 18), torch::indexing::Slice(5, 15)}, 1.0);
  v = v + 0.1 * torch::randn({1, 2, n, n});
  const double theta = 0.08;
  torch::Tensor u = internal::tv_prox(v, torch::tensor(theta), 300);
  VecC vc(n * n), uc(n * n);
  for (Index i = 0; i < n * n; ++i) {
    vc[i] = cfloat(v[0][0].view({-1})[i].item<float>(), v[0][1].view({-1})[i].item<float>());
    uc[i] = cfloat(u[0][0].view({-1})[i].item<float>(), u[0][1].view({-1})[i].item<float>());
  }
  TvOptions o;
  o.max_iterations = 2000;
  o.tolerance = 0;
  TvPrior tv(Shape{n, n}, 1.0, o);
  VecC ref;
  tv.prox(vc, theta, ref);
  auto objective = [&](const VecC& x) { return 0.5 * (x - vc).squaredNorm() + theta * tv.total_variation(x); };
  EXPECT_NEAR(internal::tv_value(u).item<double>(), tv.total_variation(uc), 1e-3 * tv.total_variation(uc));
  EXPECT_LT(objective(uc), objective(ref) * (1 + 1e-3));
  EXPECT_LT(objective(uc), objective(vc) * 0.9);  // and it did something
}

TEST(UNet, ShapesSkipsAndZeroStart) {
  internal::UNet with(2, 2, 3, 4, true, true), without(2, 2, 3, 4, false, true);
  torch::Tensor x = torch::randn({2, 2, 16, 24});
  EXPECT_EQ(with->forward(x).sizes(), x.sizes());
  EXPECT_EQ(with->forward(x).abs().max().item<double>(), 0.0);  // zero output layer
  auto count = [](internal::UNet& u) {
    int64_t n = 0;
    for (auto& p : u->parameters()) n += p.numel();
    return n;
  };
  // The decoders' first convolutions see twice the channels with skips.
  EXPECT_EQ(count(with) - count(without), 9 * (4 * 4 + 8 * 8 + 16 * 16));
  perturb(*without, 3, 0.1);
  EXPECT_GT(without->forward(x).abs().max().item<double>(), 0.0);
}

// Directional derivatives of the training loss with respect to the
// parameters (all at once and each scalar parameter alone) against central
// differences. Float32 pipeline (the bridge runs recofold's operators in
// single precision), so the steps are 1e-3..1e-2 for scalar parameters and the
// tolerance is a few percent.
void expect_gradients_match(UnrolledArchitecture a) {
  SCOPED_TRACE(a.describe());
  internal::UnrolledNet net(a);
  if (a.prior == LearnedPriorKind::kFlow) net->flow()->initialize(torch::rand({8, 1, a.ny, a.nx}));
  perturb(*net, 5, a.prior == LearnedPriorKind::kFlow ? 0.02 : 0.05);
  std::vector<Measurement> ms = {draw_training_example(conditions(a.ny), 3, 0),
                                 draw_training_example(conditions(a.ny), 3, 1)};
  internal::PreparedBatch b = internal::prepare_batch({&ms[0], &ms[1]}, a);
  auto loss = [&]() { return (internal::magnitude(net->forward(b.data, b.ops)) - b.truth).pow(2).mean(); };
  std::vector<torch::Tensor> params;
  std::vector<std::string> names;
  for (const auto& item : net->named_parameters())
    if (item.value().requires_grad()) {
      params.push_back(item.value());
      names.push_back(item.key());
    }
  for (auto& p : params)
    if (p.grad().defined()) p.grad().zero_();
  loss().backward();
  auto fd_along = [&](const std::vector<torch::Tensor>& dirs, double eps) {
    torch::NoGradGuard ng;
    for (size_t i = 0; i < params.size(); ++i) params[i].add_(dirs[i] * eps);
    const double lp = loss().item<double>();
    for (size_t i = 0; i < params.size(); ++i) params[i].add_(dirs[i] * (-2 * eps));
    const double lm = loss().item<double>();
    for (size_t i = 0; i < params.size(); ++i) params[i].add_(dirs[i] * eps);
    return (lp - lm) / (2 * eps);
  };
  int scalar_checks = 0;
  for (size_t i = 0; i < params.size(); ++i) {
    // Per-iteration scalars: steps, mu, thresholds, theta, eta, lambda (not
    // network biases, whose unit directions cross ReLU kinks).
    static const std::vector<std::string> scalars = {"dc_step",      "dc_log_mu",     "wavelet_log_threshold",
                                                     "tv_log_theta", "flow_log_step", "flow_log_lambda"};
    if (std::find(scalars.begin(), scalars.end(), names[i]) == scalars.end()) continue;
    std::vector<torch::Tensor> dirs;
    for (size_t j = 0; j < params.size(); ++j) dirs.push_back(torch::zeros_like(params[j]));
    dirs[i] = torch::ones_like(params[i]);
    // The soft threshold, the dual projection and the ReLUs make the loss
    // piecewise smooth; a difference step that straddles a kink is off, so
    // the derivative must match the difference at one of three steps.
    const double ad = params[i].grad().sum().item<double>();
    double fd = 0, best = 1e300;
    for (double eps : {1e-2, 3e-3, 1e-3}) {
      const double f = fd_along(dirs, eps);
      if (std::abs(f - ad) < best) {
        best = std::abs(f - ad);
        fd = f;
      }
    }
    EXPECT_NEAR(ad, fd, 0.03 * std::abs(fd) + 1e-6) << names[i];
    EXPECT_GT(std::abs(fd), 1e-7) << names[i] << " has no effect on the loss";
    ++scalar_checks;
  }
  EXPECT_GT(scalar_checks, 0);
  std::vector<torch::Tensor> dirs;
  double ad = 0;
  torch::manual_seed(9);
  for (auto& p : params) {
    dirs.push_back(torch::randn_like(p));
    ad += (dirs.back() * p.grad()).sum().item<double>();
  }
  // A random direction moves every weight at once, so ReLU and projection
  // kinks are crossed more often: the closest of four steps must match.
  double fd = 0, best = 1e300;
  for (double eps : {3e-3, 1e-3, 3e-4, 1e-4}) {
    const double f = fd_along(dirs, eps);
    if (std::abs(f - ad) < best) {
      best = std::abs(f - ad);
      fd = f;
    }
  }
  EXPECT_NEAR(ad, fd, 0.05 * std::abs(fd) + 1e-6) << "all parameters";
}

TEST(UnrolledNet, GradientsOfEveryPriorKindMatchFiniteDifferences) {
  for (LearnedPriorKind p : {LearnedPriorKind::kCnn, LearnedPriorKind::kUnet, LearnedPriorKind::kTv,
                             LearnedPriorKind::kWavelet, LearnedPriorKind::kFlow})
    expect_gradients_match(architecture(p));
  UnrolledArchitecture cg = architecture(LearnedPriorKind::kTv);
  cg.dc = LearnedDc::kCg;
  cg.cg_iterations = 4;
  expect_gradients_match(cg);
  UnrolledArchitecture tuned = architecture(LearnedPriorKind::kFlow);
  tuned.flow_finetune = true;
  expect_gradients_match(tuned);
}

TEST(UnrolledNet, FrozenFlowPriorTrainsOnlyItsStepsAndWeights) {
  UnrolledArchitecture a = architecture(LearnedPriorKind::kFlow);
  internal::UnrolledNet net(a);
  std::vector<std::string> trainable;
  for (const auto& item : net->named_parameters())
    if (item.value().requires_grad()) trainable.push_back(item.key());
  std::sort(trainable.begin(), trainable.end());
  EXPECT_EQ(trainable, (std::vector<std::string>{"dc_step", "flow_log_lambda", "flow_log_step"}));
}

TEST(UnrolledModel, NewPriorKindsSaveAndLoadBitForBit) {
  for (LearnedPriorKind p : {LearnedPriorKind::kUnet, LearnedPriorKind::kTv, LearnedPriorKind::kFlow}) {
    UnrolledArchitecture a = architecture(p);
    UnrolledModel model(a, 4);
    perturb(*model.state().net, 6, 0.02);
    Measurement m = draw_training_example(conditions(), 8, 0);
    ImageC before = model.reconstruct(m);
    const std::string path = temp_path("prior.h5");
    model.save(path);
    UnrolledModel loaded = UnrolledModel::load(path);
    EXPECT_EQ(loaded.architecture().to_json(), a.to_json());
    ImageC after = loaded.reconstruct(m);
    EXPECT_EQ(0, std::memcmp(before.data(), after.data(), sizeof(cfloat) * static_cast<size_t>(before.size())))
        << to_string(p);
    EXPECT_TRUE(before.abs().isFinite().all());
    std::remove(path.c_str());
  }
}

TEST(UnrolledArchitecture, ValidatesUnetDepthAndFlowSize) {
  UnrolledArchitecture a = architecture(LearnedPriorKind::kUnet, 24);
  a.depth = 4;  // 24 is not divisible by 16
  ASSERT_FALSE(a.validate().empty());
  EXPECT_NE(a.validate().front().find("depth"), std::string::npos);
  UnrolledArchitecture f = architecture(LearnedPriorKind::kFlow, 16);
  f.flow = tiny_flow(32);
  ASSERT_FALSE(f.validate().empty());
  EXPECT_NE(f.validate().front().find("flow_model"), std::string::npos) << f.validate().front();
  f.flow.reset();
  EXPECT_FALSE(f.validate().empty());
}

}  // namespace
}  // namespace recofold
