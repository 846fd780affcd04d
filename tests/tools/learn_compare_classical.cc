// SPDX-License-Identifier: Apache-2.0
// Scores a trained model against zero-filled, tuned FISTA-wavelet and tuned TV-ADMM on the trainer's validation set
// (the classical methods through reconstruct(), as `recofold recon` and studies run them).
//
// Usage: learn_compare_classical --config configs/train-mri-small.toml [--model model.h5] [--count N]
//                                [--iters 100]
// The validation examples are those the trainer scores (same config seed,
// trainer.h validation_seed). Each classical prior's lambda is tuned on the
// same set: the value of a log grid with the best mean PSNR is reported
// (oracle tuning, which favours the classical methods). PSNR on magnitudes,
// peak = max |truth| per image, as in the trainer. Prints one line per method
// and RESULT|...| lines; also the model's inference time per image.
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "recofold/learn/model.h"
#include "recofold/learn/trainer.h"
#include "recofold/learn/training_data.h"
#include "recofold/recon/forward_model.h"
#include "recofold/recon/reconstruct.h"

namespace {

using namespace recofold;

double psnr(const VecC& x, const NdArray<cfloat>& truth) {
  double peak = 0, se = 0;
  for (Index i = 0; i < x.size(); ++i) {
    const double t = std::abs(truth.data[static_cast<size_t>(i)]);
    peak = std::max(peak, t);
    const double d = std::abs(x[i]) - t;
    se += d * d;
  }
  return 10 * std::log10(peak * peak / (se / double(x.size())));
}


}  // namespace

int main(int argc, char** argv) {
  std::string config, model_path;
  int count = -1, iters = 100;
  for (int i = 1; i + 1 < argc; i += 2) {
    const std::string a = argv[i];
    if (a == "--config") config = argv[i + 1];
    else if (a == "--model") model_path = argv[i + 1];
    else if (a == "--count") count = std::atoi(argv[i + 1]);
    else if (a == "--iters") iters = std::atoi(argv[i + 1]);
    else {
      std::fprintf(stderr, "unknown flag %s\n", argv[i]);
      return 2;
    }
  }
  if (config.empty()) {
    std::fprintf(stderr, "usage: learn_compare_classical --config F [--model M] [--count N] [--iters K]\n");
    return 2;
  }
  try {
    const TrainingConfig cfg = TrainingConfig::load(config);
    if (count < 0) count = cfg.train.validation_count;
    std::vector<Measurement> ms;
    for (int i = 0; i < count; ++i)
      ms.push_back(draw_training_example(cfg.data, validation_seed(cfg.train.seed), static_cast<uint64_t>(i)));
    // A^H y (zero-filled for MRI): one CG step from zero is a scaled A^H y,
    // so the adjoint comes from the forward model itself.
    double zf = 0;
    for (const auto& m : ms) {
      const ForwardModel fm = make_forward_model(m);
      VecC x;
      fm.op->adjoint(fm.y, x);
      zf += psnr(x, *m.truth) / count;
    }
    std::printf("%-28s %8.2f dB\n", "A^H y (zero-filled)", zf);
    std::printf("RESULT|learn compare|%s|A^H y psnr|%.2f|dB\n", config.c_str(), zf);

    // The classical priors through reconstruct(), the path of `recofold recon`
    // and of studies (ReconSpec defaults except the given iterations and lambda).
    const std::vector<double> lambdas = {1e-4, 2e-4, 5e-4, 1e-3, 2e-3, 5e-3, 1e-2, 2e-2, 5e-2};
    for (const std::string method : {"fista-wavelet", "admm-tv"}) {
      double best = -1e9, best_lambda = 0;
      for (double lambda : lambdas) {
        ReconSpec spec;
        spec.method = method == "fista-wavelet" ? Method::kFista : Method::kAdmm;
        spec.prior.kind = method == "fista-wavelet" ? PriorKind::kWavelet : PriorKind::kTv;
        spec.lambda.mode = LambdaMode::kValue;
        spec.lambda.value = lambda;
        spec.iterations = iters;
        ReconHooks hooks;
        hooks.record_history = false;
        double mean = 0;
        for (const auto& m : ms) {
          const Reconstruction r = reconstruct(m, spec, hooks);
          const VecC x = Eigen::Map<const VecC>(r.image.data(), r.image.size());
          mean += psnr(x, *m.truth) / count;
        }
        if (mean > best) {
          best = mean;
          best_lambda = lambda;
        }
      }
      std::printf("%-28s %8.2f dB (lambda %.0e, tuned on this set)\n", method.c_str(), best, best_lambda);
      std::printf("RESULT|learn compare|%s|%s tuned psnr|%.2f|dB\n", config.c_str(), method.c_str(), best);
    }
    if (!model_path.empty()) {
      UnrolledModel model = UnrolledModel::load(model_path);
      double mean = 0;
      const auto t0 = std::chrono::steady_clock::now();
      for (const auto& m : ms) {
        ImageC img = model.reconstruct(m);
        VecC x = Eigen::Map<const VecC>(img.data(), img.size());
        mean += psnr(x, *m.truth) / count;
      }
      const double ms_per = 1e3 * std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count() / count;
      std::printf("%-28s %8.2f dB (%s; %.1f ms per image)\n", "learned unrolled", mean,
                  model.architecture().describe().c_str(), ms_per);
      std::printf("RESULT|learn compare|%s|learned psnr|%.2f|dB\n", config.c_str(), mean);
      std::printf("RESULT|learn compare|%s|learned inference|%.1f|ms/image\n", config.c_str(), ms_per);
    }
  } catch (const std::exception& e) {
    std::fprintf(stderr, "learn_compare_classical: %s\n", e.what());
    return 1;
  }
  return 0;
}
