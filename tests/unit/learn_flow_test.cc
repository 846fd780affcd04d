// SPDX-License-Identifier: Apache-2.0
// Tests of the normalising flow: exact inverse, log-determinant against the Jacobian, model files, density gradient.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstring>
#include <string>
#include <unistd.h>

#include "learn/flow_fit.h"
#include "learn/flow_net.h"
#include "learn/flow_state.h"
#include "recofold/core/error.h"
#include "recofold/io/h5_file.h"
#include "recofold/learn/flow_model.h"
#include "recofold/learn/model.h"

namespace recofold {
namespace {

std::string temp_path(const std::string& name) {
  return "/tmp/recofold_learn_flow_test_" + std::to_string(getpid()) + "_" + name;
}

FlowArchitecture tiny(Index n = 8, int scales = 2, FlowMixing mixing = FlowMixing::kInvConv) {
  FlowArchitecture a;
  a.ny = a.nx = n;
  a.scales = scales;
  a.couplings = 2;
  a.width = 8;
  a.mixing = mixing;
  return a;
}

// Moves every parameter away from its initial value (the last layers start
// at zero, which would make every coupling the identity).
void perturb(internal::FlowNetImpl& net, uint64_t seed, double size = 0.1) {
  torch::manual_seed(seed);
  torch::NoGradGuard ng;
  for (auto& p : net.parameters()) p.add_(torch::randn_like(p) * size);
}

NdArray<float> random_images(int64_t b, Index ny, Index nx, uint64_t seed) {
  torch::manual_seed(seed);
  torch::Tensor t = torch::rand({b, 1, ny, nx});
  NdArray<float> a(Shape{b, 1, ny, nx});
  std::memcpy(a.ptr(), t.data_ptr<float>(), sizeof(float) * static_cast<size_t>(a.size()));
  return a;
}

double relative_difference(const NdArray<float>& a, const NdArray<float>& b) {
  double d = 0, n = 0;
  for (Index i = 0; i < a.size(); ++i) {
    d += std::pow(double(a.data[size_t(i)]) - double(b.data[size_t(i)]), 2);
    n += std::pow(double(a.data[size_t(i)]), 2);
  }
  return std::sqrt(d / n);
}

TEST(FlowNet, SqueezeIsInvertedByUnsqueezeAndPlacesSubPixelsAsDocumented) {
  torch::Tensor x = torch::arange(2 * 3 * 4 * 6, torch::kFloat32).reshape({2, 3, 4, 6});
  torch::Tensor s = internal::squeeze2(x);
  ASSERT_EQ(s.sizes(), (std::vector<int64_t>{2, 12, 2, 3}));
  EXPECT_TRUE(torch::equal(internal::unsqueeze2(s), x));
  // channel c' * 4 + 2 di + dj at (i, j) holds x[c', 2i + di, 2j + dj].
  EXPECT_EQ(s[1][2 * 4 + 2 * 1 + 0][1][2].item<float>(), x[1][2][3][4].item<float>());
  EXPECT_EQ(s[0][1 * 4 + 0 + 1][0][1].item<float>(), x[0][1][0][3].item<float>());
}

TEST(FlowModel, EncodeThenDecodeReturnsTheImageWithin1e5Relative) {
  for (FlowMixing mixing : {FlowMixing::kInvConv, FlowMixing::kReverse}) {
    for (int scales : {1, 3}) {
      FlowArchitecture a = tiny(16, scales, mixing);
      FlowModel model(a, 2);
      model.state().net->initialize(internal::images_to_tensor(random_images(8, 16, 16, 3), a, ""));
      perturb(*model.state().net, 4);
      NdArray<float> x = random_images(3, 16, 16, 5);
      NdArray<float> back = model.decode(model.encode(x));
      EXPECT_LT(relative_difference(x, back), 1e-5) << to_string(mixing) << ", " << scales << " scales";
      // Decoding first: z -> x -> z.
      NdArray<float> z = model.encode(x);
      EXPECT_LT(relative_difference(z, model.encode(model.decode(z))), 1e-5);
    }
  }
}

// log|det dz/dx| of the network against the determinant of its Jacobian,
// computed row by row with autograd in double precision. (The independent
// PyTorch implementation of the same flow checks this again from Python:
// tests/reference/learn_flow_torch.py.)
TEST(FlowNet, LogDeterminantMatchesTheDeterminantOfTheJacobian) {
  for (FlowMixing mixing : {FlowMixing::kInvConv, FlowMixing::kReverse}) {
    FlowArchitecture a = tiny(8, 2, mixing);
    internal::FlowNet net(a);
    net->initialize(torch::rand({16, 1, 8, 8}));
    perturb(*net, 7, 0.2);
    net->to(torch::kFloat64);
    torch::Tensor x = torch::rand({1, 1, 8, 8}, torch::kFloat64).requires_grad_(true);
    auto [z, logdet] = net->forward(x);
    const int64_t d = z.size(1);
    torch::Tensor jac = torch::empty({d, d}, torch::kFloat64);
    for (int64_t i = 0; i < d; ++i) {
      torch::Tensor g = torch::autograd::grad({z[0][i]}, {x}, {}, /*retain_graph=*/true)[0];
      jac[i] = g.reshape({-1});
    }
    torch::Tensor sl = std::get<1>(torch::linalg_slogdet(jac));
    EXPECT_NEAR(logdet.item<double>(), sl.item<double>(), 1e-8 * std::max(1.0, std::abs(sl.item<double>())))
        << to_string(mixing);
    // The perturbation must make the flow non-trivial: not volume preserving.
    EXPECT_GT(std::abs(sl.item<double>() + 64 * std::log(a.data_scale)), 0.1);
  }
}

TEST(FlowModel, ActnormInitialisationStandardisesEveryChannel) {
  FlowArchitecture a = tiny(8, 1);
  internal::FlowNet net(a);
  torch::Tensor x = 0.3 + 0.05 * torch::randn({32, 1, 8, 8});
  net->initialize(x);
  // The first step's actnorm maps the normalised data to zero mean, unit variance.
  auto params = net->named_parameters();
  const double b = params["step0.an_bias"].item<double>(), logs = params["step0.an_logs"].item<double>();
  torch::Tensor xn = (x - a.data_shift) / a.data_scale;
  torch::Tensor y = (xn + b) * std::exp(logs);
  EXPECT_NEAR(y.mean().item<double>(), 0.0, 1e-4);
  EXPECT_NEAR(y.std(false).item<double>(), 1.0, 1e-3);
}

TEST(FlowModel, SaveThenLoadGivesBitIdenticalDensities) {
  FlowArchitecture a = tiny(16, 3);
  FlowModel model(a, 9);
  perturb(*model.state().net, 10);
  model.info().metrics["val_bits_per_dim"] = 3.25;
  const std::string path = temp_path("flow.h5");
  model.save(path);
  EXPECT_EQ(model_file_kind(path), "flow");
  FlowModel loaded = FlowModel::load(path);
  NdArray<float> x = random_images(4, 16, 16, 11);
  const std::vector<double> before = model.log_density(x), after = loaded.log_density(x);
  ASSERT_EQ(before.size(), 4u);
  for (size_t i = 0; i < before.size(); ++i) EXPECT_EQ(before[i], after[i]);
  EXPECT_EQ(model.parameter_names(), loaded.parameter_names());
  for (const auto& n : model.parameter_names()) EXPECT_EQ(model.parameter_values(n), loaded.parameter_values(n)) << n;
  EXPECT_EQ(loaded.architecture().to_json(), a.to_json());
  EXPECT_EQ(loaded.info().metrics.at("val_bits_per_dim"), 3.25);
  // A flow file is not an unrolled reconstruction model, and the other way round.
  try {
    UnrolledModel::load(path);
    ADD_FAILURE() << "loaded a flow file as an unrolled model";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/model@kind");
    EXPECT_NE(std::string(e.what()).find("flow"), std::string::npos) << e.what();
  }
  UnrolledArchitecture ua;
  ua.ny = ua.nx = 16;
  ua.depth = 2;
  ua.width = 4;
  const std::string upath = temp_path("unrolled.h5");
  UnrolledModel(ua, 1).save(upath);
  EXPECT_EQ(model_file_kind(upath), "unrolled");
  EXPECT_THROW(FlowModel::load(upath), InputError);
  std::remove(path.c_str());
  std::remove(upath.c_str());
}

TEST(FlowModel, LoadRejectsTensorOfWrongShapeAndUnknownArchitectureKey) {
  FlowArchitecture a = tiny(8, 2);
  FlowModel model(a, 1);
  const std::string path = temp_path("bad.h5");
  {
    H5Writer w(path);
    w.write_attr("/model", "kind", std::string("flow"));
    w.write_attr("/model", "architecture", a.to_json());
    for (const auto& n : model.parameter_names()) {
      std::vector<float> v = model.parameter_values(n);
      NdArray<float> t(Shape{static_cast<Index>(v.size()) + (n == "step0.an_bias" ? 1 : 0)});
      std::copy(v.begin(), v.end(), t.data.begin());
      w.write("/model/parameters/" + n, t);
    }
    w.commit();
  }
  try {
    FlowModel::load(path);
    ADD_FAILURE() << "accepted a tensor of the wrong shape";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "/model/parameters/step0.an_bias");
  }
  {
    H5Writer w(path);
    std::string json = a.to_json();
    json.insert(json.size() - 1, ",\"depth\":3");
    w.write_attr("/model", "kind", std::string("flow"));
    w.write_attr("/model", "architecture", json);
    w.commit();
  }
  try {
    FlowModel::load(path);
    ADD_FAILURE() << "accepted an unknown architecture key";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("depth"), std::string::npos) << e.what();
  }
  std::remove(path.c_str());
}

TEST(FlowModel, RefusesImagesOfAnotherSizeAndNonFinitePixels) {
  FlowModel model(tiny(8, 2), 1);
  try {
    model.bits_per_dim(NdArray<float>(Shape{16, 16}, 0.5f), "big.h5");
    ADD_FAILURE();
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "big.h5");
    EXPECT_EQ(e.field(), "image size");
  }
  NdArray<float> x(Shape{8, 8}, 0.5f);
  x.data[3] = std::nanf("");
  EXPECT_THROW(model.bits_per_dim(x, "nan.h5"), InputError);
}

TEST(FlowModel, BitsPerDimensionFollowsTheDocumentedFormula) {
  FlowArchitecture a = tiny(8, 2);
  a.dequant = 1.0 / 64;
  FlowModel model(a, 3);
  perturb(*model.state().net, 5);
  NdArray<float> x = random_images(2, 8, 8, 6);
  const auto lp = model.log_density(x);
  const auto bpd = model.bits_per_dim(x);
  for (size_t i = 0; i < lp.size(); ++i)
    EXPECT_NEAR(bpd[i], (-lp[i] + 64 * std::log(64.0)) / (64 * std::log(2.0)), 1e-9);
}

// -log p of a complex image: the flow's NLL of the real part plus the
// Gaussian term of the imaginary part; the gradient against central
// differences of that function evaluated in double precision (eps 1e-6, so
// the ReLU kinks of the coupling networks are rarely crossed).
TEST(FlowModel, NegLogDensityAndItsGradientMatchTheDefinitionAndFiniteDifferences) {
  FlowArchitecture a = tiny(8, 2);
  a.imag_sigma = 0.1;
  FlowModel model(a, 3);
  model.state().net->initialize(torch::rand({16, 1, 8, 8}));
  perturb(*model.state().net, 8);
  model.state().net->to(torch::kFloat64);
  VecC x(64);
  NdArray<float> re(Shape{8, 8});
  double im2 = 0;
  for (Index i = 0; i < 64; ++i) {
    x[i] = cfloat(0.2f + 0.6f * float(i % 7) / 7.0f, 0.01f * float(i % 5));
    re.data[size_t(i)] = x[i].real();
    im2 += double(x[i].imag()) * double(x[i].imag());
  }
  VecC g;
  const double value = model.neg_log_density(x, &g);
  EXPECT_NEAR(value, -model.log_density(re)[0] + im2 / (2 * 0.01), 1e-9 * std::abs(value));
  for (Index i = 0; i < 64; ++i) EXPECT_NEAR(g[i].imag(), x[i].imag() / 0.01, 1e-4);
  auto nll = [&](const torch::Tensor& t) { return -model.state().net->log_prob(t).item<double>(); };
  torch::Tensor xt = torch::empty({1, 1, 8, 8}, torch::kFloat64);
  for (Index i = 0; i < 64; ++i) xt.view({-1})[i] = double(x[i].real());
  for (int trial = 0; trial < 3; ++trial) {
    torch::manual_seed(20 + trial);
    torch::Tensor d = torch::randn({1, 1, 8, 8}, torch::kFloat64);
    const double eps = 1e-6;
    const double fd = (nll(xt + eps * d) - nll(xt - eps * d)) / (2 * eps);
    double ad = 0;
    for (Index i = 0; i < 64; ++i) ad += double(g[i].real()) * d.view({-1})[i].item<double>();
    EXPECT_NEAR(ad, fd, 1e-4 * std::max(1.0, std::abs(fd))) << "trial " << trial;
  }
}

TEST(FlowFit, MaximumLikelihoodRecoversAnAnisotropicGaussian) {
  // Samples of N(mu, diag(0.5^2, 2^2)) as 2-channel 1x1 images; the fitted
  // flow's mean NLL on fresh samples must approach the Gaussian's entropy
  // 1 + log(2 pi) + log(0.5 * 2) (closed form: 1/2 log det(2 pi e Sigma)).
  FlowArchitecture a;
  a.ny = a.nx = 1;
  a.channels = 2;
  a.scales = 1;
  a.couplings = 4;
  a.width = 16;
  a.data_shift = 0;
  a.data_scale = 1;
  internal::FlowNet net(a);
  torch::manual_seed(3);
  auto draw = [](int64_t n) {
    torch::Tensor z = torch::randn({n, 2, 1, 1});
    z.index_put_({torch::indexing::Slice(), 0}, z.index({torch::indexing::Slice(), 0}) * 0.5 + 1.0);
    z.index_put_({torch::indexing::Slice(), 1}, z.index({torch::indexing::Slice(), 1}) * 2.0 - 3.0);
    return z;
  };
  internal::FlowFitOptions o;
  o.steps = 300;
  o.batch = 128;
  o.learning_rate = 5e-3;
  internal::fit_flow(*net, draw(4000), o);
  torch::NoGradGuard ng;
  const double nll = -net->log_prob(draw(20000)).mean().item<double>();
  const double entropy = 1 + std::log(2 * 3.14159265358979323846);
  EXPECT_NEAR(nll, entropy, 0.03);
}

}  // namespace
}  // namespace recofold
