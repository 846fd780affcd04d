// SPDX-License-Identifier: Apache-2.0
// Drives the flow for the PyTorch reference checks (tests/reference/learn_flow_torch.py).
//
// Usage:
//   learn_flow_tool jacobian DIR
//       A tiny flow on 8x8 images (2 scales, 2 couplings, width 8, invconv or
//       reverse mixing), actnorm initialised on random images and every
//       parameter perturbed so no coupling is the identity. Writes for each
//       mixing M: DIR/flow_M.h5 (the model file) and DIR/data_M.h5 with
//       /x [1,1,8,8], /z [1,64] (float32) and /logdet [1] (float64).
//   learn_flow_tool fit TRAIN.h5 HELDOUT.h5 OUT.h5 STEPS COUPLINGS WIDTH
//       Fits a flow on 2-channel 1x1 "images" to the points /samples [N, 2]
//       of TRAIN.h5 by maximum likelihood (fit_flow, Adam with cosine decay)
//       and writes the log density of every point of HELDOUT.h5 as /log_prob
//       [M] (float64, nats) to OUT.h5.
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>

#include "learn/flow_fit.h"
#include "learn/flow_net.h"
#include "learn/flow_state.h"
#include "recofold/io/h5_file.h"
#include "recofold/learn/flow_model.h"

namespace {

using namespace recofold;

NdArray<float> to_array(const torch::Tensor& t_in) {
  torch::Tensor t = t_in.detach().to(torch::kFloat32).contiguous();
  std::vector<Index> dims;
  for (int64_t d : t.sizes()) dims.push_back(d);
  NdArray<float> a{Shape(dims)};
  std::memcpy(a.ptr(), t.data_ptr<float>(), sizeof(float) * static_cast<size_t>(t.numel()));
  return a;
}

int jacobian(const std::string& dir) {
  for (FlowMixing mixing : {FlowMixing::kInvConv, FlowMixing::kReverse}) {
    FlowArchitecture a;
    a.ny = a.nx = 8;
    a.scales = 2;
    a.couplings = 2;
    a.width = 8;
    a.mixing = mixing;
    FlowModel model(a, 5);
    internal::FlowNetImpl& net = *model.state().net;
    torch::manual_seed(6);
    net.initialize(torch::rand({16, 1, 8, 8}));
    {
      torch::NoGradGuard ng;
      for (auto& p : net.parameters()) p.add_(torch::randn_like(p) * 0.2);
    }
    torch::Tensor x = torch::rand({1, 1, 8, 8});
    torch::NoGradGuard ng;
    auto [z, logdet] = net.forward(x);
    const std::string m(to_string(mixing));
    model.save(dir + "/flow_" + m + ".h5");
    H5Writer w(dir + "/data_" + m + ".h5");
    w.write("/x", to_array(x));
    w.write("/z", to_array(z));
    NdArray<double> ld(Shape{1}, logdet.item<double>());
    w.write("/logdet", ld);
    w.commit();
  }
  return 0;
}

int fit(const std::string& train, const std::string& heldout, const std::string& out, int64_t steps, int couplings,
        int width) {
  FlowArchitecture a;
  a.ny = a.nx = 1;
  a.channels = 2;
  a.scales = 1;
  a.couplings = couplings;
  a.width = width;
  a.data_shift = 0;
  a.data_scale = 1;
  FlowModel model(a, 1);
  auto load = [](const std::string& path) {
    NdArray<double> s = H5Reader(path).read_double("/samples");
    torch::Tensor t = torch::empty({s.shape[0], 2, 1, 1});
    for (Index i = 0; i < s.size(); ++i) t.view({-1})[i] = s.data[size_t(i)];
    return t;
  };
  internal::FlowFitOptions o;
  o.steps = steps;
  o.batch = 256;
  o.learning_rate = 2e-3;
  o.lr_final_fraction = 0.02;
  std::vector<double> losses = internal::fit_flow(*model.state().net, load(train), o);
  torch::NoGradGuard ng;
  torch::Tensor lp = model.state().net->log_prob(load(heldout)).to(torch::kFloat64).contiguous();
  NdArray<double> r(Shape{lp.numel()});
  std::memcpy(r.ptr(), lp.data_ptr<double>(), sizeof(double) * static_cast<size_t>(lp.numel()));
  H5Writer w(out);
  w.write("/log_prob", r);
  w.write_attr("/", "final_train_loss", losses.back());
  w.commit();
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string mode = argc > 1 ? argv[1] : "";
  try {
    if (mode == "jacobian" && argc == 3) return jacobian(argv[2]);
    if (mode == "fit" && argc == 8)
      return fit(argv[2], argv[3], argv[4], std::atoll(argv[5]), std::atoi(argv[6]), std::atoi(argv[7]));
  } catch (const std::exception& e) {
    std::fprintf(stderr, "learn_flow_tool: %s\n", e.what());
    return 1;
  }
  std::fprintf(stderr, "usage: learn_flow_tool jacobian DIR | fit TRAIN.h5 HELDOUT.h5 OUT.h5 STEPS COUPLINGS WIDTH\n");
  return 2;
}
