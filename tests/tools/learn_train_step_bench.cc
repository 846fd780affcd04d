// SPDX-License-Identifier: Apache-2.0
// Times one training step of the fixed reference unrolled network (bench/learn_train_step.py) with recofold's learn module.
//
// The network and problem are those of the PyTorch reference script
// (bench/README.md): batch 8 of real 64x64 images x ~ U(0,1), a fixed random
// Cartesian mask keeping ~30% of k-space (torch.rand < 0.3 after
// torch.manual_seed(0), used here in centred order), 5 unrolled iterations of
//   h = h + CNN(h);  h = F^H((1 - M) F h + y)    (CNN weights shared)
// with CNN = Conv(2,32,3)-ReLU-Conv(32,32,3)-ReLU-Conv(32,32,3)-ReLU-Conv(32,2,3),
// loss MSE(real channel, x), Adam lr 1e-3. Built from recofold pieces: the
// single-coil MaskedFourier operator through the autograd bridge (dc
// "replace"), the architecture's CNN prior and the trainer's Adam step.
//
// Usage: learn_train_step_bench --threads N [--steps 20] [--warmup 3]
// Prints: CHILD|threads|median ms|min ms|mask kept|loss step 1|loss last|minflt/step
//
// With --inference 1: inference time per image of the small-config
// architecture (5-iteration shared CNN depth 5 width 32, CG data consistency)
// on single-coil MRI for K in {3, 5, 10} at 64^2 and for 64^2, 128^2, 256^2
// at K = 5 (median of 5 runs after one warm-up), as INFER|K|size|ms lines.
#include <omp.h>
#include <sys/resource.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

#include "learn/unrolled_net.h"
#include "recofold/learn/model.h"
#include "recofold/learn/training_data.h"
#include "recofold/ops/fft.h"
#include "recofold/ops/fourier.h"

int main(int argc, char** argv) {
  using namespace recofold;
  int threads = 1, steps = 20, warmup = 3, inference = 0;
  for (int i = 1; i + 1 < argc; i += 2) {
    const std::string a = argv[i];
    const int v = std::atoi(argv[i + 1]);
    if (a == "--threads") threads = v;
    else if (a == "--steps") steps = v;
    else if (a == "--warmup") warmup = v;
    else if (a == "--inference") inference = v;
    else {
      std::fprintf(stderr, "unknown flag %s\n", argv[i]);
      return 2;
    }
  }
  torch::set_num_threads(threads);
  omp_set_num_threads(threads);
  if (inference) {
    for (const auto& [k, size] : std::vector<std::pair<int, int>>{{3, 64}, {5, 64}, {10, 64}, {5, 128}, {5, 256}}) {
      UnrolledArchitecture a;
      a.ny = a.nx = size;
      a.iterations = k;
      a.cg_iterations = 4;
      UnrolledModel model(a, 1);
      TrainingConditions c;
      c.ny = c.nx = size;
      const Measurement m = draw_training_example(c, 1, 0);
      std::vector<double> t;
      for (int r = 0; r < 6; ++r) {
        const auto t0 = std::chrono::steady_clock::now();
        model.reconstruct(m);
        if (r > 0) t.push_back(std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count());
      }
      std::sort(t.begin(), t.end());
      std::printf("INFER|%d|%d|%.2f\n", k, size, t[t.size() / 2] * 1e3);
    }
    return 0;
  }
  set_fft_threads(1);

  const int64_t n = 64, batch = 8;
  torch::manual_seed(0);
  torch::Tensor keep = (torch::rand({n, n}) < 0.3).to(torch::kFloat32);
  torch::Tensor x = torch::rand({batch, 1, n, n});
  // Centred order of the same mask (the reference indexes uncentred k-space).
  torch::Tensor centred = torch::fft::fftshift(keep);
  NdArray<uint8_t> mask(Shape{n, n});
  for (int64_t i = 0; i < n * n; ++i) mask.data[static_cast<size_t>(i)] = centred.view(-1)[i].item<float>() > 0.5f;

  UnrolledArchitecture arch;
  arch.modality = Modality::kMri;
  arch.ny = arch.nx = n;
  arch.iterations = 5;
  arch.prior = LearnedPriorKind::kCnn;
  arch.depth = 4;
  arch.width = 32;
  arch.kernel = 3;
  arch.shared_weights = true;
  arch.dc = LearnedDc::kReplace;
  arch.zero_last_layer = false;  // PyTorch's default initialisation, as in the reference
  internal::UnrolledNet net(arch);

  auto op = std::make_shared<MaskedFourier>(n, n, mask);
  internal::OperatorBatch ops = internal::make_operator_batch(
      std::vector<std::shared_ptr<const LinearOperator>>(static_cast<size_t>(batch), op));
  // y = M F x for each image, in the bridge's layout.
  torch::Tensor xc = torch::cat({x, torch::zeros_like(x)}, 1);  // [B, 2, n, n]
  torch::Tensor y = internal::op_apply(xc, ops).detach();

  std::vector<std::pair<std::string, torch::Tensor>> params;
  for (const auto& p : net->named_parameters()) params.emplace_back(p.key(), p.value());
  internal::AdamState adam = internal::make_adam_state(params);

  std::vector<double> times;
  std::vector<long> faults;
  double first_loss = 0, last_loss = 0;
  for (int step = 0; step < warmup + steps; ++step) {
    rusage r0{}, r1{};
    getrusage(RUSAGE_SELF, &r0);
    const auto t0 = std::chrono::steady_clock::now();
    for (auto& p : params)
      if (p.second.grad().defined()) p.second.grad().zero_();
    torch::Tensor h = net->forward(y, ops);
    torch::Tensor loss = torch::mse_loss(h.slice(1, 0, 1), x);
    loss.backward();
    internal::adam_step(params, adam, 1e-3, step + 1, 0.0);
    const double dt = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    getrusage(RUSAGE_SELF, &r1);
    last_loss = loss.item<double>();
    if (step == 0) first_loss = last_loss;
    if (step >= warmup) {
      times.push_back(dt);
      faults.push_back(r1.ru_minflt - r0.ru_minflt);
    }
  }
  std::vector<double> sorted = times;
  std::sort(sorted.begin(), sorted.end());
  const size_t mid = sorted.size() / 2;
  const double median = sorted.size() % 2 ? sorted[mid] : 0.5 * (sorted[mid - 1] + sorted[mid]);
  std::sort(faults.begin(), faults.end());
  std::printf("CHILD|%d|%d|%.3f|%.3f|%.4f|%.6f|%.6f|%ld\n", threads, torch::get_num_threads(), median * 1e3,
              sorted.front() * 1e3, keep.mean().item<double>(), first_loss, last_loss, faults[faults.size() / 2]);
  return 0;
}
