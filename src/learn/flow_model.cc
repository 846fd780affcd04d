// SPDX-License-Identifier: Apache-2.0
// FlowModel: construction, model files of kind "flow", density, bits/dim, latent maps, -log p with its gradient.
#include "recofold/learn/flow_model.h"

#include <ATen/CPUGeneratorImpl.h>

#include <cmath>
#include <cstring>

#include "flow_state.h"
#include "model_state.h"
#include "recofold/core/error.h"
#include "torch_bridge.h"

namespace recofold {

namespace internal {

std::vector<std::pair<std::string, torch::Tensor>> named_parameters(const FlowState& s) {
  std::vector<std::pair<std::string, torch::Tensor>> out;
  for (const auto& item : s.net->named_parameters()) out.emplace_back(item.key(), item.value());
  return out;
}

void write_flow_groups(H5Writer& w, const FlowState& s) {
  w.write_attr("/model", "format", int64_t{1});
  w.write_attr("/model", "kind", std::string("flow"));
  w.write_attr("/model", "architecture", s.net->architecture().to_json());
  write_info(w, s.info);
  write_tensors(w, "/model/parameters", named_parameters(s));
}

std::unique_ptr<FlowState> read_flow_groups(const H5Reader& r) {
  if (read_model_kind(r) != "flow")
    throw InputError(r.file(), "/model@kind", "an unrolled reconstruction model, not a flow (an image density)");
  auto arch = FlowArchitecture::from_json(r.attr_string("/model", "architecture"), r.file());
  auto s = std::make_unique<FlowState>(arch);
  read_info(r, s->info);
  read_tensors(r, "/model/parameters", named_parameters(*s));
  return s;
}

torch::Tensor images_to_tensor(const NdArray<float>& images, const FlowArchitecture& a, const std::string& file) {
  const Shape& s = images.shape;
  int64_t b = 0;
  if (s.rank() == 2 && a.channels == 1 && s[0] == a.ny && s[1] == a.nx) {
    b = 1;
  } else if (s.rank() == 4 && s[0] >= 1 && s[1] == a.channels && s[2] == a.ny && s[3] == a.nx) {
    b = s[0];
  } else {
    throw InputError(file, "image size",
                     "the flow models " + std::to_string(a.channels) + " x " + std::to_string(a.ny) + " x " +
                         std::to_string(a.nx) + " images, got shape " + s.to_string());
  }
  for (float v : images.data)
    if (!std::isfinite(v)) throw InputError(file, "image", "contains a non-finite pixel value");
  torch::Tensor t = torch::empty({b, a.channels, a.ny, a.nx});
  std::memcpy(t.data_ptr<float>(), images.ptr(), sizeof(float) * static_cast<size_t>(images.size()));
  return t;
}

}  // namespace internal

namespace {

std::unique_ptr<internal::FlowState> make_flow_state(const FlowArchitecture& a, uint64_t seed) {
  const auto errors = a.validate();
  RECOFOLD_CHECK(errors.empty()) << "FlowModel with an invalid architecture: " << errors.front();
  internal::align_torch_threads();
  torch::manual_seed(seed);
  return std::make_unique<internal::FlowState>(a);
}

NdArray<float> to_array(const torch::Tensor& t_in) {
  torch::Tensor t = t_in.detach().to(torch::kFloat32).contiguous();
  std::vector<Index> dims;
  for (int64_t d : t.sizes()) dims.push_back(d);
  NdArray<float> a{Shape(dims)};
  std::memcpy(a.ptr(), t.data_ptr<float>(), sizeof(float) * static_cast<size_t>(t.numel()));
  return a;
}

}  // namespace

FlowModel::FlowModel(const FlowArchitecture& architecture, uint64_t seed)
    : state_(make_flow_state(architecture, seed)) {}
FlowModel::FlowModel(std::unique_ptr<internal::FlowState> state) : state_(std::move(state)) {}
FlowModel::~FlowModel() = default;
FlowModel::FlowModel(FlowModel&&) noexcept = default;
FlowModel& FlowModel::operator=(FlowModel&&) noexcept = default;

FlowModel FlowModel::load(const std::string& path) {
  internal::align_torch_threads();
  H5Reader r(path);
  return FlowModel(internal::read_flow_groups(r));
}

void FlowModel::save(const std::string& path) const {
  H5Writer w(path);
  internal::write_flow_groups(w, *state_);
  w.commit();
}

const FlowArchitecture& FlowModel::architecture() const { return state_->net->architecture(); }
ModelInfo& FlowModel::info() { return state_->info; }
const ModelInfo& FlowModel::info() const { return state_->info; }
internal::FlowState& FlowModel::state() { return *state_; }
const internal::FlowState& FlowModel::state() const { return *state_; }

std::vector<std::string> FlowModel::parameter_names() const {
  std::vector<std::string> out;
  for (const auto& p : internal::named_parameters(*state_)) out.push_back(p.first);
  return out;
}

int64_t FlowModel::parameter_count() const {
  int64_t n = 0;
  for (const auto& p : internal::named_parameters(*state_)) n += p.second.numel();
  return n;
}

std::vector<float> FlowModel::parameter_values(const std::string& name) const {
  for (const auto& p : internal::named_parameters(*state_)) {
    if (p.first != name) continue;
    torch::Tensor c = p.second.detach().contiguous();
    return std::vector<float>(c.data_ptr<float>(), c.data_ptr<float>() + c.numel());
  }
  throw InputError("", name, "no such parameter");
}

std::vector<double> FlowModel::log_density(const NdArray<float>& images, const std::string& file) const {
  internal::align_torch_threads();
  torch::NoGradGuard ng;
  torch::Tensor x = internal::images_to_tensor(images, architecture(), file);
  torch::Tensor lp = state_->net->log_prob(x.to(state_->net->dtype())).to(torch::kFloat64).contiguous();
  return std::vector<double>(lp.data_ptr<double>(), lp.data_ptr<double>() + lp.numel());
}

std::vector<double> FlowModel::bits_per_dim(const NdArray<float>& images, const std::string& file) const {
  std::vector<double> lp = log_density(images, file);
  const double d = double(architecture().dimension());
  const double log_bin = std::log(architecture().dequant);
  for (double& v : lp) v = (-v - d * log_bin) / (d * std::log(2.0));
  return lp;
}

NdArray<float> FlowModel::encode(const NdArray<float>& images, std::vector<double>* logdet) const {
  internal::align_torch_threads();
  torch::NoGradGuard ng;
  auto [z, ld] = state_->net->forward(internal::images_to_tensor(images, architecture(), ""));
  if (logdet) {
    torch::Tensor l = ld.to(torch::kFloat64).contiguous();
    logdet->assign(l.data_ptr<double>(), l.data_ptr<double>() + l.numel());
  }
  return to_array(z);
}

NdArray<float> FlowModel::decode(const NdArray<float>& latents) const {
  internal::align_torch_threads();
  const Index d = architecture().dimension();
  RECOFOLD_CHECK(latents.shape.rank() == 2 && latents.shape[1] == d)
      << "latents of shape " << latents.shape.to_string() << ", the flow needs [B, " << d << "]";
  torch::NoGradGuard ng;
  torch::Tensor z = torch::empty({latents.shape[0], d});
  std::memcpy(z.data_ptr<float>(), latents.ptr(), sizeof(float) * static_cast<size_t>(latents.size()));
  return to_array(state_->net->inverse(z));
}

NdArray<float> FlowModel::sample(int count, double temperature, uint64_t seed) const {
  RECOFOLD_CHECK(count >= 1 && temperature >= 0);
  internal::align_torch_threads();
  torch::NoGradGuard ng;
  at::Generator gen = at::make_generator<at::CPUGeneratorImpl>(seed);
  torch::Tensor z = torch::randn({count, architecture().dimension()}, gen) * temperature;
  return to_array(state_->net->inverse(z));
}

std::vector<double> FlowModel::neg_log_density(const std::vector<const VecC*>& xs, std::vector<VecC>* grads) const {
  const FlowArchitecture& a = architecture();
  RECOFOLD_CHECK(a.channels == 1) << "neg_log_density of complex images needs a 1-channel flow";
  const Index n = a.ny * a.nx;
  const int64_t b = static_cast<int64_t>(xs.size());
  internal::align_torch_threads();
  torch::Tensor re = torch::empty({b, 1, a.ny, a.nx});
  float* p = re.data_ptr<float>();
  std::vector<double> out(xs.size(), 0.0);
  const double inv_var = 1.0 / (a.imag_sigma * a.imag_sigma);
  for (int64_t i = 0; i < b; ++i) {
    const VecC& x = *xs[static_cast<size_t>(i)];
    RECOFOLD_CHECK(x.size() == n) << "image of " << x.size() << " values for a " << a.ny << "x" << a.nx << " flow";
    double im2 = 0;
    for (Index j = 0; j < n; ++j) {
      p[i * n + j] = x[j].real();
      im2 += double(x[j].imag()) * double(x[j].imag());
    }
    out[static_cast<size_t>(i)] = 0.5 * im2 * inv_var;
  }
  torch::Tensor nll;
  torch::Tensor g;
  re = re.to(state_->net->dtype());
  if (grads) {
    torch::Tensor xr = re.requires_grad_(true);
    nll = -state_->net->log_prob(xr);
    g = torch::autograd::grad({nll.sum()}, {xr})[0].to(torch::kFloat32).contiguous();
  } else {
    torch::NoGradGuard ng;
    nll = -state_->net->log_prob(re);
  }
  torch::Tensor nd = nll.detach().to(torch::kFloat64).contiguous();
  for (int64_t i = 0; i < b; ++i) out[static_cast<size_t>(i)] += nd.data_ptr<double>()[i];
  if (grads) {
    grads->assign(xs.size(), VecC());
    const float* gp = g.data_ptr<float>();
    for (int64_t i = 0; i < b; ++i) {
      const VecC& x = *xs[static_cast<size_t>(i)];
      VecC& gi = (*grads)[static_cast<size_t>(i)];
      gi.resize(n);
      for (Index j = 0; j < n; ++j) gi[j] = cfloat(gp[i * n + j], static_cast<float>(x[j].imag() * inv_var));
    }
  }
  return out;
}

double FlowModel::neg_log_density(const VecC& x, VecC* gradient) const {
  std::vector<VecC> g;
  std::vector<double> v = neg_log_density(std::vector<const VecC*>{&x}, gradient ? &g : nullptr);
  if (gradient) *gradient = std::move(g[0]);
  return v[0];
}

}  // namespace recofold
