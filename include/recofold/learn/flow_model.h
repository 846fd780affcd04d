// SPDX-License-Identifier: Apache-2.0
// A normalising-flow model of images: build, save/load (model file of kind "flow"), density, bits/dim, latent maps.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "recofold/core/types.h"
#include "recofold/learn/flow_architecture.h"
#include "recofold/learn/model.h"

namespace recofold {

namespace internal {
struct FlowState;  // the torch module (src/learn/flow_state.h)
}

// Model file of a flow (model.h describes the common layout):
//   /model@kind          "flow"
//   /model@architecture  JSON of FlowArchitecture (flow_architecture.h)
//   /model@trained_on, @metrics (e.g. val_bits_per_dim), @config as for unrolled models
//   /model/parameters/<name>  float32, names step<i>.<parameter> as in
//                             internal::FlowStepImpl (flow_net.h)
//
// The flow acts only through its density: log p(x), bits/dim, and the
// gradient of -log p(x) (a prior term for reconstruction), plus the exact
// maps x -> z -> x for latent-space use. Images are NdArray<float> of shape
// [ny, nx] (one image, channels = 1) or [B, channels, ny, nx].
// Computations are deterministic for a fixed thread count. Methods are const
// and may be called from several threads (no gradients accumulate in the
// model's parameters).
class FlowModel {
 public:
  // A fresh model; the coupling networks' first layers get torch's default
  // initialisation drawn from `seed`, last layers start at zero.
  explicit FlowModel(const FlowArchitecture& architecture, uint64_t seed = 1);
  ~FlowModel();
  FlowModel(FlowModel&&) noexcept;
  FlowModel& operator=(FlowModel&&) noexcept;

  // InputError(path, field, ...) when the file is not a flow model file,
  // or its architecture or tensors do not match.
  static FlowModel load(const std::string& path);
  void save(const std::string& path) const;  // atomic

  const FlowArchitecture& architecture() const;
  ModelInfo& info();
  const ModelInfo& info() const;
  std::vector<std::string> parameter_names() const;
  int64_t parameter_count() const;
  std::vector<float> parameter_values(const std::string& name) const;

  // log p(x) in nats per image (continuous density). InputError(file,
  // "image size", ...) when the images' shape does not fit the architecture;
  // InputError(file, "image", ...) for non-finite pixels.
  std::vector<double> log_density(const NdArray<float>& images, const std::string& file = "") const;
  // Bits per dimension per image (flow_architecture.h).
  std::vector<double> bits_per_dim(const NdArray<float>& images, const std::string& file = "") const;
  // z = f(x): [B, D] latents (layout of flow_architecture.h); logdet (if not
  // null) receives log|det dz/dx| per image.
  NdArray<float> encode(const NdArray<float>& images, std::vector<double>* logdet = nullptr) const;
  // x = f^{-1}(z): [B, channels, ny, nx].
  NdArray<float> decode(const NdArray<float>& latents) const;
  // `count` images decoded from z ~ N(0, temperature^2 I), drawn from `seed`.
  NdArray<float> sample(int count, double temperature, uint64_t seed) const;

  // -log p(x) of a complex image [ny * nx] (channels = 1): the flow's density
  // of Re x and N(0, imag_sigma^2) of Im x, i.e.
  //   -log p_flow(Re x) + ||Im x||^2 / (2 imag_sigma^2)  (dropping Im's constant),
  // and, when gradient is not null, its gradient (real part from autograd,
  // imaginary part Im x / imag_sigma^2) as a complex vector.
  double neg_log_density(const VecC& x, VecC* gradient = nullptr) const;
  // The same for a batch of complex images, for callers that hold several.
  std::vector<double> neg_log_density(const std::vector<const VecC*>& xs, std::vector<VecC>* gradients) const;

  internal::FlowState& state();
  const internal::FlowState& state() const;

 private:
  explicit FlowModel(std::unique_ptr<internal::FlowState> state);
  std::unique_ptr<internal::FlowState> state_;
};

}  // namespace recofold
