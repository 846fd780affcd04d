// SPDX-License-Identifier: Apache-2.0
// Prior flow: the descent prox, the box, FISTA convergence and reconstruct() wiring,
// against a stand-in flow whose -log p is a Gaussian (closed-form prox and minimiser).
#include <gtest/gtest.h>

#include <cmath>
#include <memory>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/pixel_mask.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/flow_prior.h"
#include "recofold/recon/reconstruct.h"

namespace recofold {
namespace {

constexpr Index kN = 16;
constexpr double kVar = 0.04;  // sigma^2 of the stand-in density

// The mean image of the stand-in density: a bright square on a dark ground, some pixels negative.
VecC mean_image() {
  VecC mu(kN * kN);
  for (Index r = 0; r < kN; ++r)
    for (Index c = 0; c < kN; ++c) mu[r * kN + c] = cfloat((r > 4 && r < 11 && c > 3 && c < 12) ? 0.8f : -0.1f, 0.0f);
  return mu;
}

// -log p(x) = 1/2 ||x - mu||^2 / var + 7 (a constant, as a flow's normalisation would add); counts calls.
class GaussianFlowBackend final : public LearnedBackend {
 public:
  std::string name() const override { return "gaussian stand-in"; }
  LearnedModelInfo inspect_model(const std::string&) const override { throw WorkError("not a test of this"); }
  LearnedTrainingPlan inspect_training(const std::string&) const override { throw WorkError("not a test of this"); }
  LearnedReconstruction reconstruct(const Measurement&, const std::string&) const override {
    throw WorkError("not a test of this");
  }
  LearnedTrainingOutcome train(const LearnedTrainingRun&) const override { throw WorkError("not a test of this"); }
  std::string checkpoint_file(const std::string& m) const override { return m + ".ckpt"; }
  double bits_per_dim(const std::string&, const ImageF&, const std::string&) const override { return 0.0; }
  double flow_neg_log_density(const std::string& file, Index ny, Index nx, const VecC& x, VecC* g) const override {
    if (file != "gauss.h5") throw InputError(file, "model", "no flow");
    if (ny != kN || nx != kN) throw InputError(file, "model", "grid");
    ++calls;
    const VecC d = x - mean_image();
    if (g) *g = d / static_cast<float>(kVar);
    return 0.5 * d.squaredNorm() / kVar + 7.0;
  }
  mutable int calls = 0;
};

// argmin_u 1/2||u - v||^2 + s/2 ||u - mu||^2 / var, pixel by pixel.
VecC exact_prox(const VecC& v, double s) {
  return (v + static_cast<float>(s / kVar) * mean_image()) / static_cast<float>(1.0 + s / kVar);
}

VecC noisy_image(double sigma, uint64_t seed) {
  Rng rng(seed);
  VecC y = mean_image();
  for (Index i = 0; i < y.size(); ++i) y[i] += cfloat(float(sigma * rng.normal()), 0.0f);
  return y;
}

TEST(FlowPrior, DescentProxReachesTheClosedFormProxAndNeverIncreasesItsObjective) {
  GaussianFlowBackend b;
  const VecC v = noisy_image(0.3, 3);
  for (double lambda : {0.01, 0.1, 1.0}) {
    const double step = 0.5;
    const VecC want = exact_prox(v, step * lambda);
    FlowProxOptions many;
    many.inner_steps = 200;
    VecC u;
    FlowPrior(b, "gauss.h5", kN, kN, lambda, many).prox(v, step, u);
    EXPECT_LT((u - want).norm(), 1e-4 * want.norm()) << "lambda " << lambda;
    // A short descent (the default 5 steps) lowers the prox objective and moves toward the prox.
    VecC u5;
    FlowPrior p5(b, "gauss.h5", kN, kN, lambda);
    p5.prox(v, step, u5);
    const auto phi = [&](const VecC& x) { return 0.5 * (x - v).squaredNorm() + step * p5.value(x); };
    EXPECT_LT(phi(u5), phi(v)) << "lambda " << lambda;
    EXPECT_LT((u5 - want).norm(), (v - want).norm()) << "lambda " << lambda;
  }
  // Weight 0: the prox is the identity and the flow is not evaluated.
  const int before = b.calls;
  VecC same;
  FlowPrior(b, "gauss.h5", kN, kN, 0.0).prox(v, 1.0, same);
  EXPECT_EQ((same - v).norm(), 0.0f);
  EXPECT_EQ(b.calls, before);
}

TEST(FlowPrior, BoxProxIsTheProjectedClosedFormForASeparableDensity) {
  GaussianFlowBackend b;
  const VecC v = noisy_image(0.3, 4);
  FlowProxOptions many;
  many.inner_steps = 200;
  const FlowPrior p(b, "gauss.h5", kN, kN, 0.2, many);
  VecC u;
  ASSERT_TRUE(p.prox_with_box(v, 1.0, Box{0.0}, u));
  VecC want = exact_prox(v, 0.2);
  for (Index i = 0; i < want.size(); ++i) want[i] = cfloat(std::max(0.0f, want[i].real()), 0.0f);
  EXPECT_LT((u - want).norm(), 1e-4 * want.norm());
  EXPECT_EQ(Box{0.0}.violation(u), 0.0);
}

TEST(FlowPrior, ValueAndGradientCarryTheWeightAndMatchFiniteDifferences) {
  GaussianFlowBackend b;
  const FlowPrior p(b, "gauss.h5", kN, kN, 0.3);
  const VecC x = noisy_image(0.2, 5);
  VecC g;
  p.gradient(x, g);
  Rng rng(9);
  VecC d(x.size());
  for (Index i = 0; i < d.size(); ++i) d[i] = cfloat(float(rng.normal()), float(rng.normal()));
  const double h = 1e-3;
  const double fd = (p.value(x + static_cast<float>(h) * d) - p.value(x - static_cast<float>(h) * d)) / (2 * h);
  EXPECT_NEAR(fd, double(g.dot(d).real()), 1e-2 * std::abs(fd) + 1e-3);
  EXPECT_NEAR(p.value(mean_image()), 0.3 * 7.0, 1e-9);
}

TEST(FlowPrior, FistaConvergesToTheMinimiserOfTheDenoisingObjective) {
  GaussianFlowBackend b;
  const VecC y = noisy_image(0.2, 6);
  const double lambda = 0.05;
  NdArray<uint8_t> all(Shape{kN, kN});
  for (auto& v : all.data) v = 1;
  const PixelMaskOperator a(all);
  // min 1/2||x - y||^2 + lambda/2 ||x - mu||^2 / var
  const VecC want = (y + static_cast<float>(lambda / kVar) * mean_image()) / static_cast<float>(1.0 + lambda / kVar);
  FistaOptions o;
  o.max_iterations = 200;
  o.relative_tolerance = 1e-9;
  VecC x;
  const SolverSummary s = solve_fista(o, a, FlowPrior(b, "gauss.h5", kN, kN, lambda), y, x);
  EXPECT_LT((x - want).norm(), 1e-4 * want.norm());
  ASSERT_GE(s.iterations.size(), 2u);
  EXPECT_LE(s.iterations.back().objective, s.iterations.front().objective);
}

Measurement denoise_measurement(double sigma) {
  Measurement m;
  m.modality = Modality::kDenoise;
  m.ny = m.nx = kN;
  ImageProblemData d;
  d.observed = NdArray<float>(Shape{kN, kN});
  d.pixel_mask = NdArray<uint8_t>(Shape{kN, kN});
  const VecC y = noisy_image(sigma, 8);
  for (Index i = 0; i < kN * kN; ++i) {
    d.observed.data[static_cast<size_t>(i)] = y[i].real();
    d.pixel_mask.data[static_cast<size_t>(i)] = 1;
  }
  d.noise_sigma = sigma;
  d.pattern = "all";
  m.image = std::move(d);
  return m;
}

TEST(FlowPrior, ReconstructRunsPriorFlowWithGivenAndAutoLambdaAndRefusesOtherSolvers) {
  register_learned_backend(std::make_unique<GaussianFlowBackend>());
  const Measurement m = denoise_measurement(0.2);
  ReconSpec s;
  s.method = Method::kFista;
  s.prior.kind = PriorKind::kFlow;
  s.model = "gauss.h5";
  s.lambda.mode = LambdaMode::kValue;
  s.lambda.value = 0.05;
  s.iterations = 300;
  s.tolerance = 1e-9;
  const Reconstruction r = reconstruct(m, s);
  VecC y(kN * kN), x(kN * kN);
  for (Index i = 0; i < kN * kN; ++i) {
    y[i] = cfloat(m.image->observed.data[static_cast<size_t>(i)], 0.0f);
    x[i] = r.image.data()[i];
  }
  const VecC want = (y + static_cast<float>(0.05 / kVar) * mean_image()) / static_cast<float>(1.0 + 0.05 / kVar);
  EXPECT_LT((x - want).norm(), 1e-3 * want.norm());
  EXPECT_EQ(reconstruction_record(m, r).text_attrs.at("prior_model"), "gauss.h5");

  // auto: the discrepancy rule picks a weight > 0 and the result is nearer the mean image than the data.
  s.lambda.mode = LambdaMode::kAuto;
  const Reconstruction ra = reconstruct(m, s);
  EXPECT_GT(ra.lambda.value, 0.0);
  VecC xa(kN * kN);
  for (Index i = 0; i < kN * kN; ++i) xa[i] = ra.image.data()[i];
  EXPECT_LT((xa - mean_image()).norm(), (y - mean_image()).norm());

  // Solvers without a gradient form, a missing model, a wrong grid.
  ReconSpec bad = s;
  bad.method = Method::kAdmm;
  try {
    reconstruct(m, bad);
    FAIL() << "admm with prior flow ran";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("ista or fista"), std::string::npos) << e.what();
  }
  bad = s;
  bad.model.clear();
  EXPECT_THROW(reconstruct(m, bad), InputError);
  bad = s;
  bad.model = "other.h5";
  EXPECT_THROW(reconstruct(m, bad), InputError);
}

}  // namespace
}  // namespace recofold
