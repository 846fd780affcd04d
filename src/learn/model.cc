// SPDX-License-Identifier: Apache-2.0
// UnrolledModel: construction, model files (HDF5), reconstruction of measurements.
#include "recofold/learn/model.h"

#include <cstring>

#include "model_state.h"
#include "recofold/core/checks.h"
#include "recofold/core/error.h"
#include "recofold/core/json.h"

namespace recofold {

namespace internal {

std::vector<std::pair<std::string, torch::Tensor>> named_parameters(const ModelState& s) {
  std::vector<std::pair<std::string, torch::Tensor>> out;
  for (const auto& item : s.net->named_parameters()) out.emplace_back(item.key(), item.value());
  return out;
}

void write_tensors(H5Writer& w, const std::string& group,
                   const std::vector<std::pair<std::string, torch::Tensor>>& tensors) {
  for (const auto& [name, t] : tensors) {
    torch::Tensor c = t.detach().to(torch::kFloat32).contiguous();
    std::vector<Index> dims;
    for (int64_t d : c.sizes()) dims.push_back(d);
    if (dims.empty()) dims.push_back(1);
    NdArray<float> a{Shape(dims)};
    std::memcpy(a.ptr(), c.data_ptr<float>(), sizeof(float) * static_cast<size_t>(c.numel()));
    w.write(group + "/" + name, a);
  }
}

void read_tensors(const H5Reader& r, const std::string& group,
                  const std::vector<std::pair<std::string, torch::Tensor>>& tensors) {
  if (!r.is_group(group)) throw InputError(r.file(), group, "missing group of parameter tensors");
  std::vector<std::string> present = r.children(group);
  for (const auto& name : present) {
    bool known = false;
    for (const auto& t : tensors) known = known || t.first == name;
    if (!known) throw InputError(r.file(), group + "/" + name, "tensor is not part of the architecture");
  }
  torch::NoGradGuard no_grad;
  for (const auto& [name, t] : tensors) {
    const std::string path = group + "/" + name;
    if (!r.has(path)) throw InputError(r.file(), path, "missing parameter tensor");
    NdArray<float> a = r.read_float(path);
    require_finite(a.ptr(), a.size(), r.file(), path);  // one NaN weight would silently give an all-zero image
    std::vector<Index> want;
    for (int64_t d : t.sizes()) want.push_back(d);
    if (want.empty()) want.push_back(1);
    if (a.shape != Shape(want))
      throw InputError(r.file(), path, "shape " + a.shape.to_string() + ", the architecture needs " + Shape(want).to_string());
    torch::Tensor src = torch::from_blob(a.ptr(), t.sizes(), torch::kFloat32);
    t.copy_(src);
  }
}

void write_info(H5Writer& w, const ModelInfo& info) {
  w.write_attr("/model", "trained_on", info.trained_on ? info.trained_on->to_json() : std::string("{}"));
  JsonObjectWriter m;
  for (const auto& [k, v] : info.metrics) m.add(k, v);
  w.write_attr("/model", "metrics", m.str());
  w.write_attr("/model", "config", info.config_text);
  w.write_attr("/provenance", "producer", info.provenance.producer);
  w.write_attr("/provenance", "command", info.provenance.command);
  w.write_attr("/provenance", "created_utc", info.provenance.created_utc);
  for (const auto& [k, v] : info.provenance.extra) w.write_attr("/provenance", k, v);
}

void read_info(const H5Reader& r, ModelInfo& info) {
  if (r.has_attr("/model", "trained_on")) {
    const std::string t = r.attr_string("/model", "trained_on");
    if (t != "{}") info.trained_on = TrainingConditions::from_json(t, r.file());
  }
  if (r.has_attr("/model", "metrics")) {
    JsonValue v = parse_json(r.attr_string("/model", "metrics"), r.file(), "/model@metrics");
    for (const auto& [k, x] : v.members)
      if (x.kind == JsonValue::Kind::kNumber) info.metrics[k] = x.number;
  }
  if (r.has_attr("/model", "config")) info.config_text = r.attr_string("/model", "config");
  if (r.is_group("/provenance")) {
    for (const auto& name : r.attr_names("/provenance")) {
      const std::string v = r.attr_as_text("/provenance", name);
      if (name == "producer") info.provenance.producer = v;
      else if (name == "command") info.provenance.command = v;
      else if (name == "created_utc") info.provenance.created_utc = v;
      else info.provenance.extra[name] = v;
    }
  }
}

std::string read_model_kind(const H5Reader& r) {
  if (!r.is_group("/model") || !r.has_attr("/model", "architecture"))
    throw InputError(r.file(), "/model", "not a recofold model file (no /model group with an architecture)");
  if (!r.has_attr("/model", "kind")) return "unrolled";
  const std::string kind = r.attr_string("/model", "kind");
  if (kind != "unrolled" && kind != "flow")
    throw InputError(r.file(), "/model@kind", "'" + kind + "' is not one of unrolled, flow");
  return kind;
}

void write_model_groups(H5Writer& w, const ModelState& s) {
  w.write_attr("/model", "format", int64_t{1});
  w.write_attr("/model", "kind", std::string("unrolled"));
  w.write_attr("/model", "architecture", s.net->architecture().to_json());
  write_info(w, s.info);
  write_tensors(w, "/model/parameters", named_parameters(s));
}

std::unique_ptr<ModelState> read_model_groups(const H5Reader& r) {
  if (read_model_kind(r) != "unrolled")
    throw InputError(r.file(), "/model@kind",
                     "a flow model (an image density) cannot reconstruct by itself; use it as a prior or to score images");
  auto arch = UnrolledArchitecture::from_json(r.attr_string("/model", "architecture"), r.file());
  auto s = std::make_unique<ModelState>(arch);
  read_info(r, s->info);
  read_tensors(r, "/model/parameters", named_parameters(*s));
  return s;
}

}  // namespace internal

namespace {
std::unique_ptr<internal::ModelState> make_state(const UnrolledArchitecture& a, uint64_t seed) {
  const auto errors = a.validate();
  RECOFOLD_CHECK(errors.empty()) << "UnrolledModel with an invalid architecture: " << errors.front();
  internal::align_torch_threads();
  torch::manual_seed(seed);
  return std::make_unique<internal::ModelState>(a);
}
}  // namespace

UnrolledModel::UnrolledModel(const UnrolledArchitecture& architecture, uint64_t seed)
    : state_(make_state(architecture, seed)) {}
UnrolledModel::UnrolledModel(std::unique_ptr<internal::ModelState> state) : state_(std::move(state)) {}
UnrolledModel::~UnrolledModel() = default;
UnrolledModel::UnrolledModel(UnrolledModel&&) noexcept = default;
UnrolledModel& UnrolledModel::operator=(UnrolledModel&&) noexcept = default;

std::string model_file_kind(const std::string& path) {
  H5Reader r(path);
  return internal::read_model_kind(r);
}

UnrolledModel UnrolledModel::load(const std::string& path) {
  H5Reader r(path);
  return UnrolledModel(internal::read_model_groups(r));
}

void UnrolledModel::save(const std::string& path) const {
  H5Writer w(path);
  internal::write_model_groups(w, *state_);
  w.commit();
}

const UnrolledArchitecture& UnrolledModel::architecture() const { return state_->net->architecture(); }
ModelInfo& UnrolledModel::info() { return state_->info; }
const ModelInfo& UnrolledModel::info() const { return state_->info; }
internal::ModelState& UnrolledModel::state() { return *state_; }
const internal::ModelState& UnrolledModel::state() const { return *state_; }

std::vector<std::string> UnrolledModel::parameter_names() const {
  std::vector<std::string> out;
  for (const auto& p : internal::named_parameters(*state_)) out.push_back(p.first);
  return out;
}

int64_t UnrolledModel::parameter_count() const {
  int64_t n = 0;
  for (const auto& p : internal::named_parameters(*state_)) n += p.second.numel();
  return n;
}

std::vector<float> UnrolledModel::parameter_values(const std::string& name) const {
  for (const auto& p : internal::named_parameters(*state_)) {
    if (p.first != name) continue;
    torch::Tensor c = p.second.detach().contiguous();
    return std::vector<float>(c.data_ptr<float>(), c.data_ptr<float>() + c.numel());
  }
  throw InputError("", name, "no such parameter");
}

std::vector<ImageC> UnrolledModel::reconstruct(const std::vector<const Measurement*>& ms, const std::string& file) const {
  internal::align_torch_threads();
  torch::NoGradGuard no_grad;
  internal::PreparedBatch b = internal::prepare_batch(ms, architecture(), file);
  torch::Tensor x = state_->net->forward(b.data, b.ops).contiguous();
  std::vector<ImageC> out;
  const Index ny = architecture().ny, nx = architecture().nx, n = ny * nx;
  const float* p = x.data_ptr<float>();
  for (size_t i = 0; i < ms.size(); ++i) {
    ImageC img(ny, nx);
    const float* re = p + static_cast<Index>(i) * 2 * n;
    for (Index j = 0; j < n; ++j) img.data()[j] = cfloat(re[j], re[n + j]);
    out.push_back(std::move(img));
  }
  return out;
}

ImageC UnrolledModel::reconstruct(const Measurement& m, const std::string& file) const {
  return reconstruct(std::vector<const Measurement*>{&m}, file).front();
}

std::string UnrolledModel::outside_training(const Measurement& m) const {
  return state_->info.trained_on ? state_->info.trained_on->outside(m) : std::string();
}

}  // namespace recofold
