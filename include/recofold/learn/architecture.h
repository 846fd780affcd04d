// SPDX-License-Identifier: Apache-2.0
// Architecture of a learned unrolled network: K x (prior step, data-consistency step), described by a config block.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/config.h"
#include "recofold/core/measurement.h"
#include "recofold/core/types.h"
#include "recofold/learn/flow_architecture.h"

namespace recofold {

// Data-consistency step of iteration k (z = output of the prior step, A the
// measurement's operator scaled so that ||A|| = 1, y the data scaled alike):
enum class LearnedDc {
  // "gradient": x = z - alpha_k A^H (A z - y), alpha_k learned (initial init_step).
  kGradient,
  // "cg": x = argmin ||A x - y||^2 + mu_k ||x - z||^2, i.e. the solve of
  // (A^H A + mu_k I) x = A^H y + mu_k z by cg_iterations conjugate-gradient
  // steps; mu_k > 0 learned, gradients flow through the solve (MoDL:
  // Aggarwal, Mani & Jacob, IEEE TMI 38, 2019; the backward pass is a second
  // CG solve with the same self-adjoint matrix).
  kCg,
  // "replace": x = z + A^H (y - A z) with A unscaled: for single-coil
  // Cartesian data this puts the measured k-space samples back unchanged
  // (hard replacement). Refused for multi-coil or CT data.
  kReplace,
};

// Learned prior step z = D_k(x):
enum class LearnedPriorKind {
  // "cnn": residual CNN denoiser z = x + CNN_k(x) on the real and imaginary
  // parts as 2 channels (DnCNN-like: conv-ReLU layers, last layer linear;
  // Zhang et al., IEEE TIP 26, 2017). Weights shared across iterations or
  // one set per iteration.
  kCnn,
  // "wavelet": learned soft thresholding of an orthogonal wavelet transform,
  // z = W^H soft(W x, theta_k[band]) with one learned threshold per sub-band
  // and iteration (deep unfolding in the LISTA sense: Gregor & LeCun, ICML 2010).
  kWavelet,
  // "unet": residual U-Net z = x + U_k(x) on the 2 channels (Ronneberger,
  // Fischer & Brox, MICCAI 2015): `depth` resolution levels, each two
  // conv3x3-ReLU layers, 2x2 max pooling down, 2x2 transposed convolution up,
  // skip connections by concatenation (`skips`), `width` channels at the top
  // level doubling per level, a 1x1 output convolution. Shared or per iteration.
  kUnet,
  // "tv": learned total variation, z = prox of theta_k TV(.) (isotropic over
  // both directions and the real/imaginary parts, Neumann boundary: the
  // penalty of priors/tv.h) by `tv_iterations` steps of the fast dual gradient
  // projection (Beck & Teboulle, IEEE TIP 2009) from a zero dual, unrolled so
  // that theta_k (one per iteration, learned) gets exact gradients.
  kTv,
  // "flow": the density of a normalising flow (flow_architecture.h), through
  // its likelihood only: z approximately minimises
  //   1/2 ||z - x||^2 + lambda_k (-log p(z))
  // by `flow_steps` gradient steps z <- z - eta_k ((z - x) + lambda_k grad(-log p)(z))
  // from z = x, with eta_k and lambda_k learned per iteration and the flow
  // frozen (flow_finetune = false) or trained along. -log p of a complex image
  // is that of flow_model.h (real part under the flow, imaginary part Gaussian).
  kFlow,
};

std::string_view to_string(LearnedDc dc);
std::optional<LearnedDc> parse_learned_dc(std::string_view text);      // "gradient" | "cg" | "replace"
std::string_view to_string(LearnedPriorKind prior);
std::optional<LearnedPriorKind> parse_learned_prior(std::string_view text);  // "cnn" | "wavelet" | "unet" | "tv" | "flow"

// The whole architecture; written to a model file as JSON (model.h) and read
// from the [model] table of a training config. Every field is a key of that
// table with the same name.
struct UnrolledArchitecture {
  Modality modality = Modality::kMri;  // mri | ct: which measurements the model takes
  Index ny = 64, nx = 64;        // image grid the model reconstructs (from [data] size)
  int iterations = 5;            // K, unrolled iterations (1..50)
  LearnedPriorKind prior = LearnedPriorKind::kCnn;
  LearnedDc dc = LearnedDc::kCg;
  int cg_iterations = 10;        // "cg": CG steps per solve (1..200)
  double init_step = 1.0;        // "gradient": initial alpha_k (> 0; 1 = 1/||A||^2)
  double init_mu = 0.05;         // "cg": initial mu_k (> 0); larger trusts the prior more
  // CNN and U-Net priors.
  int depth = 5;                 // cnn: convolution layers (2..30); unet: resolution levels below the top (1..6)
  int width = 32;                // cnn: hidden channels (1..256); unet: channels of the top level (1..128)
  int kernel = 3;                // cnn: kernel size, odd (1..9)
  bool skips = true;             // unet: skip connections (false: a plain encoder-decoder)
  bool shared_weights = true;    // one network for all iterations (false: one per iteration)
  // Start the last convolution at zero (the residual branch then outputs 0
  // and the untrained model equals the data-consistency scheme alone);
  // false keeps torch's default initialisation of every layer.
  bool zero_last_layer = true;
  // Wavelet prior.
  std::string wavelet = "db2";   // db1 (haar) .. db4
  int levels = 3;                // decomposition levels (1..8; ny, nx divisible by 2^levels)
  double init_threshold = 0.01;  // wavelet: initial threshold of every band; tv: initial theta_k (> 0), image units
  // TV prior.
  int tv_iterations = 10;        // inner FGP steps per prox (1..200)
  // Flow prior.
  int flow_steps = 2;            // gradient steps per prior step (1..20)
  double init_flow_step = 0.5;   // initial eta_k (0 < eta <= 1)
  double init_flow_lambda = 1e-4;  // initial lambda_k (> 0), relative to the image's squared units
  bool flow_finetune = false;    // train the flow's weights too
  std::optional<FlowArchitecture> flow;  // the flow's architecture (required for prior "flow")

  // Every violation as "model.field = value; rule"; empty means valid.
  std::vector<std::string> validate() const;

  // One-line JSON object with every field (the model file's `architecture`).
  std::string to_json() const;
  // Reads to_json() text. Unknown or mistyped keys and invalid values throw
  // InputError(file, field, ...) naming the key. Missing keys keep defaults.
  static UnrolledArchitecture from_json(const std::string& json, const std::string& file,
                                        const std::string& field = "/model@architecture");
  // Reads a [model] table (keys as the fields above except ny/nx/modality,
  // which come from [data], and `flow`, which comes from the flow model file
  // named by the key flow_model; `*flow_model` receives that path, "" when
  // absent). Unknown keys and invalid values throw InputError with file, line and key.
  static UnrolledArchitecture from_config(const Config& table, std::string* flow_model = nullptr);

  // "cnn depth 5 width 32 k3 shared, 5 it, dc cg(10)"
  std::string describe() const;
};

}  // namespace recofold
