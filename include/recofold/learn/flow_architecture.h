// SPDX-License-Identifier: Apache-2.0
// Architecture of a normalising flow on images (multi-scale RealNVP/Glow blocks), described by a config block.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "recofold/core/config.h"
#include "recofold/core/types.h"

namespace recofold {

// What precedes each channel coupling (it decides which channels the next
// coupling transforms).
enum class FlowMixing {
  // "invconv": an invertible 1x1 convolution W = P L (U + diag(exp(log_s)))
  // with P the fixed channel reversal, L unit lower and U strictly upper
  // triangular (the LU form of Glow: Kingma & Dhariwal, NeurIPS 2018);
  // log|det| = H W sum(log_s). Starts as the reversal (L = I, U = 0, log_s = 0).
  kInvConv,
  // "reverse": the fixed channel reversal (a permutation, log|det| = 0; RealNVP).
  kReverse,
};

std::string_view to_string(FlowMixing m);
std::optional<FlowMixing> parse_flow_mixing(std::string_view text);  // "invconv" | "reverse"

// A normalising flow x -> z on images of `channels` x ny x nx values, with
// log p(x) = log N(z; 0, I) + log|det dz/dx| (Dinh, Sohl-Dickstein & Bengio,
// "Density estimation using Real NVP", ICLR 2017; Kingma & Dhariwal, "Glow",
// NeurIPS 2018). The exact sequence of steps (the model file and the PyTorch
// reference check in tests/reference rebuild it from these fields alone):
//
//   x' = (x - data_shift) / data_scale                 log|det| -= D log(data_scale)
//   c = channels, h = ny, w = nx
//   for scale s = 0 .. scales-1:
//     if h*w > 1: `couplings` checkerboard steps, parities 0, 1, 0, ...
//     if s < scales-1:
//       squeeze (c, h, w) -> (4c, h/2, w/2)
//       `couplings` channel steps
//       split: the first c/2 channels leave as a latent part, c -> c/2
//     else if c >= 2: `couplings` channel steps
//   the remaining c channels are the last latent part
//
// A step is [actnorm] -> [mixing (channel steps only)] -> affine coupling:
//   actnorm (when `actnorm`): y = (x + b_c) exp(logs_c) per channel,
//     log|det| = h w sum(logs); b, logs are set from the first training batch
//     so that every channel has zero mean and unit variance (Glow).
//   checkerboard coupling with mask m (m = 1 where (row + col + parity) is
//     even): (s, t) = NN(cat(x m, m)); y = x m + (1 - m) (x exp(s) + t),
//     log|det| = sum((1 - m) s).
//   channel coupling: x = (x1, x2) split in halves of c/2 channels,
//     (s, t) = NN(x1); y = (x1, x2 exp(s) + t), log|det| = sum(s).
//   s = s_scale_c tanh(s_raw) (bounded log-scales, RealNVP), s_scale learned, starts at 1.
//   NN = conv3x3(in -> width) ReLU conv1x1(width -> width) ReLU
//        conv3x3(width -> 2 c_t) with zero padding; the output channels are
//        (s_raw of the c_t transformed channels, then t). The last
//        convolution starts at zero, so the untrained flow is actnorm + mixing only.
// squeeze: out[b, 4c', i, j] with c' = the input channel, sub-pixel
//   (di, dj) at channel index c' * 4 + 2 di + dj.
// Latent layout (encode/decode): the parts in the order they leave, each
//   flattened [c, h, w] row-major, concatenated: D = channels ny nx values.
//
// Images: the flow models real images (the real part). For complex images
// (MRI) the prior density is p(Re x) N(Im x; 0, imag_sigma^2 I) (the objects
// are real-valued), so -log p adds ||Im x||^2 / (2 imag_sigma^2) + const.
//
// Training adds dequantisation noise u ~ U(-dequant/2, dequant/2)^D to every
// image (continuous density on data with exactly flat regions; Dinh et al.
// 2017 for 8-bit data). Bits per dimension of an image x report the
// probability of its bin of width dequant:
//   bits/dim = (-log p(x) - D log(dequant)) / (D ln 2),
// which for dequant = 1/256 over a unit data range is the usual 8-bit figure.
struct FlowArchitecture {
  Index ny = 64, nx = 64;  // image grid (each divisible by 2^(scales-1))
  int channels = 1;        // values per pixel (1 for images; 1..16)
  int scales = 3;          // 1..6
  int couplings = 3;       // coupling steps per group (1..16)
  int width = 32;          // hidden channels of each coupling network (4..512)
  FlowMixing mixing = FlowMixing::kInvConv;
  bool actnorm = true;
  double data_shift = 0.5;   // x' = (x - shift) / scale before the first step
  double data_scale = 0.25;  // > 0
  double dequant = 1.0 / 256.0;  // > 0, image units
  double imag_sigma = 0.02;      // > 0, complex images only

  // Every violation as "model.field = value; rule"; empty means valid.
  std::vector<std::string> validate() const;
  // D = channels ny nx.
  Index dimension() const { return static_cast<Index>(channels) * ny * nx; }
  std::string to_json() const;
  // Unknown or mistyped keys and invalid values throw InputError(file, field, ...).
  static FlowArchitecture from_json(const std::string& json, const std::string& file,
                                    const std::string& field = "/model@architecture");
  // Reads the flow keys of a [model] table (kind = "flow"); ny/nx come from [data].
  static FlowArchitecture from_config(const Config& table);
  // The [model] keys from_config accepts (besides "kind").
  static const std::vector<std::string>& config_keys();
  // "flow 64x64, 3 scales x 3 couplings, width 32, invconv"
  std::string describe() const;
};

}  // namespace recofold
