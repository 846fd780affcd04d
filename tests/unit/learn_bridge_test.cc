// SPDX-License-Identifier: Apache-2.0
// Tests of the libtorch bridge: operator gradients against finite differences, CG solve gradients, FFT against torch::fft.
#include <gtest/gtest.h>

#include <functional>
#include <memory>

#include "learn/torch_bridge.h"
#include "recofold/core/rng.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/ops/wavelet.h"

namespace recofold {
namespace {

using internal::OperatorBatch;

NdArray<uint8_t> random_mask(Index ny, Index nx, Rng& rng) {
  NdArray<uint8_t> m(Shape{ny, nx}, 0);
  for (auto& v : m.data) v = rng.uniform() < 0.4 ? 1 : 0;
  m.data[static_cast<size_t>(ny / 2 * nx + nx / 2)] = 1;
  return m;
}

std::shared_ptr<const LinearOperator> sense_operator(Index n, int coils, uint64_t seed) {
  Rng rng(seed);
  CoilArrayOptions co;
  co.coils = coils;
  return std::make_shared<MaskedFourier>(n, n, random_mask(n, n, rng),
                                         coils > 1 ? synthetic_coil_maps(co, n, n) : NdArray<cfloat>{});
}

std::shared_ptr<const LinearOperator> ct_operator(Index n, int views) {
  CtGeometry g;
  for (int v = 0; v < views; ++v) g.angles_rad.push_back(3.14159265358979 * v / views);
  g.ny = g.nx = n;
  g.detector_count = static_cast<Index>(1.5 * double(n));
  return std::make_shared<JosephProjector>(g, 0.05);
}

// Directional derivative of L(x) = sum(w * f(x)^2) from autograd against a
// central difference; f is the bridge map. Quadratic in x, so the central
// difference is exact up to rounding.
using Map = std::function<torch::Tensor(const torch::Tensor&)>;

void expect_gradient_matches_finite_differences(const Map& f, torch::Tensor x, const std::string& what) {
  torch::manual_seed(11);
  torch::Tensor w = torch::randn_like(f(x).detach());
  x = x.detach().requires_grad_(true);
  torch::Tensor loss = (w * f(x).pow(2)).sum();
  loss.backward();
  for (int trial = 0; trial < 3; ++trial) {
    torch::Tensor d = torch::randn_like(x);
    const double eps = 1e-2;
    torch::NoGradGuard ng;
    const double lp = (w * f(x + eps * d).pow(2)).sum().item<double>();
    const double lm = (w * f(x - eps * d).pow(2)).sum().item<double>();
    const double fd = (lp - lm) / (2 * eps);
    const double ad = (x.grad() * d).sum().item<double>();
    EXPECT_NEAR(ad, fd, 1e-2 * std::max(1.0, std::abs(fd))) << what << " trial " << trial;
  }
}

TEST(TorchBridge, OperatorGradientsMatchFiniteDifferencesForSenseProjectorAndWavelet) {
  const Index n = 16;
  std::vector<std::pair<std::string, std::vector<std::shared_ptr<const LinearOperator>>>> cases = {
      {"single-coil Fourier", {sense_operator(n, 1, 1), sense_operator(n, 1, 2)}},
      {"SENSE 4 coils", {sense_operator(n, 4, 3), sense_operator(n, 4, 4)}},
      {"Joseph projector", {ct_operator(n, 12), ct_operator(n, 9)}},
      {"wavelet db2", {std::make_shared<WaveletTransform>(Shape{n, n}, WaveletFamily::kDb2, 2)}},
  };
  for (const auto& [name, ops] : cases) {
    OperatorBatch batch = internal::make_operator_batch(ops);
    batch.scale.back() = 0.5f;
    torch::manual_seed(3);
    torch::Tensor x = torch::randn({batch.size(), 2, n, n});
    torch::Tensor y = torch::randn({batch.size(), 2, batch.range_size});
    // Padding of the shorter range must stay zero for the adjoint test below.
    for (int64_t b = 0; b < batch.size(); ++b)
      y.index_put_({b, torch::indexing::Slice(), torch::indexing::Slice(ops[static_cast<size_t>(b)]->range_size(), torch::indexing::None)}, 0);
    expect_gradient_matches_finite_differences([&](const torch::Tensor& t) { return internal::op_apply(t, batch); }, x, name + " apply");
    expect_gradient_matches_finite_differences([&](const torch::Tensor& t) { return internal::op_adjoint(t, batch); }, y, name + " adjoint");
    expect_gradient_matches_finite_differences([&](const torch::Tensor& t) { return internal::op_normal(t, batch); }, x, name + " normal");
    // Adjoint identity through the bridge: <A x, y> = <x, A^H y> in the real representation.
    const double lhs = (internal::op_apply(x, batch) * y).sum().item<double>();
    const double rhs = (x * internal::op_adjoint(y, batch)).sum().item<double>();
    EXPECT_NEAR(lhs, rhs, 1e-4 * std::abs(lhs)) << name;
  }
}

TEST(TorchBridge, CgSolveMatchesSystemAndItsGradientsMatchFiniteDifferences) {
  const Index n = 16;
  OperatorBatch batch = internal::make_operator_batch({sense_operator(n, 4, 5), sense_operator(n, 1, 6)});
  torch::manual_seed(4);
  torch::Tensor rhs = torch::randn({2, 2, n, n});
  torch::Tensor mu = torch::tensor(0.2, torch::kFloat32);
  torch::Tensor x = internal::cg_solve(rhs, mu, batch, 60);
  // Residual of (A^H A + mu I) x = rhs.
  torch::Tensor res = internal::op_normal(x, batch) + 0.2 * x - rhs;
  EXPECT_LT(res.norm().item<double>(), 1e-4 * rhs.norm().item<double>());

  expect_gradient_matches_finite_differences(
      [&](const torch::Tensor& t) { return internal::cg_solve(t, mu, batch, 60); }, rhs, "cg rhs");
  // d/dmu by a central difference.
  torch::Tensor w = torch::randn({2, 2, n, n});
  torch::Tensor m = mu.clone().requires_grad_(true);
  (w * internal::cg_solve(rhs, m, batch, 60)).sum().backward();
  const double eps = 1e-3;
  torch::NoGradGuard ng;
  const double lp = (w * internal::cg_solve(rhs, mu + eps, batch, 60)).sum().item<double>();
  const double lm = (w * internal::cg_solve(rhs, mu - eps, batch, 60)).sum().item<double>();
  EXPECT_NEAR(m.grad().item<double>(), (lp - lm) / (2 * eps), 1e-2 * std::abs((lp - lm) / (2 * eps)));
}

TEST(TorchBridge, WrappedCenteredFftAgreesWithTorchFft) {
  const Index ny = 24, nx = 16;
  OperatorBatch batch = internal::make_operator_batch({std::make_shared<CenteredFft>(ny, nx)});
  torch::manual_seed(5);
  torch::Tensor x = torch::randn({1, 2, ny, nx});
  torch::Tensor ours = internal::op_apply(x, batch).reshape({2, ny, nx});
  torch::Tensor z = torch::complex(x[0][0], x[0][1]);
  torch::Tensor ref = torch::fft::fftshift(torch::fft::fft2(torch::fft::ifftshift(z), c10::nullopt, {-2, -1}, "ortho"));
  torch::Tensor ours_c = torch::complex(ours[0], ours[1]);
  EXPECT_LT((ours_c - ref).abs().max().item<double>(), 1e-5);
  torch::Tensor back = internal::op_adjoint(internal::op_apply(x, batch), batch);
  EXPECT_LT((back - x).abs().max().item<double>(), 1e-5);
}

}  // namespace
}  // namespace recofold
