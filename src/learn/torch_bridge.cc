// SPDX-License-Identifier: Apache-2.0
// libtorch bridge: recofold LinearOperators as autograd functions (backward = adjoint) and a differentiable CG solve.
#include "torch_bridge.h"

#include <omp.h>

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/ops/fft.h"
#include "train_support.h"

namespace recofold::internal {

namespace {

using torch::autograd::AutogradContext;
using torch::autograd::variable_list;

enum class Mode : int64_t { kApply = 0, kAdjoint = 1, kNormal = 2 };

const OperatorBatch& batch_of(AutogradContext* ctx) {
  return *reinterpret_cast<const OperatorBatch*>(ctx->saved_data["batch"].toInt());
}

int64_t handle(const OperatorBatch& b) { return reinterpret_cast<int64_t>(&b); }

// One pass of the operators over a batch in the 2-channel layout.
torch::Tensor run(const torch::Tensor& input, const OperatorBatch& ob, Mode mode) {
  torch::Tensor in = input.to(torch::kFloat32).contiguous();
  const int64_t nb = in.size(0);
  RECOFOLD_CHECK(nb == ob.size()) << "batch of " << nb << " tensors but " << ob.size() << " operators";
  const Index n_img = ob.ny * ob.nx;
  const Index in_stride = mode == Mode::kAdjoint ? ob.range_size : n_img;
  const Index out_stride = mode == Mode::kApply ? ob.range_size : n_img;
  RECOFOLD_CHECK(in.numel() == nb * 2 * in_stride)
      << "bridge input has " << in.numel() << " values, expected " << nb * 2 * in_stride;
  torch::Tensor out = mode == Mode::kApply ? torch::zeros({nb, 2, ob.range_size})
                                           : torch::empty({nb, 2, ob.ny, ob.nx});
  const float* ip = in.data_ptr<float>();
  float* op = out.data_ptr<float>();
#pragma omp parallel for schedule(static) if (nb > 1)
  for (int64_t b = 0; b < nb; ++b) {
    const LinearOperator& a = *ob.ops[static_cast<size_t>(b)];
    const float s = ob.scale[static_cast<size_t>(b)];
    const Index n_in = mode == Mode::kAdjoint ? a.range_size() : n_img;
    const float* re = ip + b * 2 * in_stride;
    const float* im = re + in_stride;
    VecC v(n_in);
    for (Index i = 0; i < n_in; ++i) v[i] = cfloat(re[i], im[i]);
    VecC w;
    float f = s;
    if (mode == Mode::kApply) {
      a.apply(v, w);
    } else if (mode == Mode::kAdjoint) {
      a.adjoint(v, w);
    } else {
      a.normal(v, w);
      f = s * s;
    }
    float* ore = op + b * 2 * out_stride;
    float* oim = ore + out_stride;
    for (Index i = 0; i < w.size(); ++i) {
      ore[i] = f * w[i].real();
      oim[i] = f * w[i].imag();
    }
  }
  return out;
}

class OperatorFunction : public torch::autograd::Function<OperatorFunction> {
 public:
  static torch::Tensor forward(AutogradContext* ctx, torch::Tensor x, int64_t batch, int64_t mode) {
    ctx->saved_data["batch"] = batch;
    ctx->saved_data["mode"] = mode;
    return run(x, *reinterpret_cast<const OperatorBatch*>(batch), static_cast<Mode>(mode));
  }
  static variable_list backward(AutogradContext* ctx, variable_list grads) {
    const auto mode = static_cast<Mode>(ctx->saved_data["mode"].toInt());
    const Mode transposed = mode == Mode::kApply ? Mode::kAdjoint : mode == Mode::kAdjoint ? Mode::kApply : Mode::kNormal;
    return {run(grads[0], batch_of(ctx), transposed), torch::Tensor(), torch::Tensor()};
  }
};

// Solves (s^2 A^H A + mu I) x = rhs for each example.
torch::Tensor cg_run(const torch::Tensor& rhs_in, double mu, const OperatorBatch& ob, int iterations) {
  torch::Tensor rhs = rhs_in.to(torch::kFloat32).contiguous();
  const int64_t nb = rhs.size(0);
  RECOFOLD_CHECK(nb == ob.size());
  const Index n = ob.ny * ob.nx;
  RECOFOLD_CHECK(rhs.numel() == nb * 2 * n);
  torch::Tensor out = torch::empty({nb, 2, ob.ny, ob.nx});
  const float* ip = rhs.data_ptr<float>();
  float* op = out.data_ptr<float>();
#pragma omp parallel for schedule(static) if (nb > 1)
  for (int64_t b = 0; b < nb; ++b) {
    const LinearOperator& a = *ob.ops[static_cast<size_t>(b)];
    const double s2 = double(ob.scale[static_cast<size_t>(b)]) * double(ob.scale[static_cast<size_t>(b)]);
    const float* re = ip + b * 2 * n;
    VecC r(n);
    for (Index i = 0; i < n; ++i) r[i] = cfloat(re[i], re[n + i]);
    VecC x = VecC::Zero(n), p = r, ap;
    double rs = norm_squared(r);
    const double stop = 1e-12 * rs;
    for (int it = 0; it < iterations && rs > stop && rs > 0; ++it) {
      a.normal(p, ap);
      ap = static_cast<float>(s2) * ap + static_cast<float>(mu) * p;
      const double pap = dot(p, ap).real();
      if (!(pap > 0)) break;
      const auto alpha = static_cast<float>(rs / pap);
      x += alpha * p;
      r -= alpha * ap;
      const double rs_new = norm_squared(r);
      p = r + static_cast<float>(rs_new / rs) * p;
      rs = rs_new;
    }
    float* ore = op + b * 2 * n;
    for (Index i = 0; i < n; ++i) {
      ore[i] = x[i].real();
      ore[n + i] = x[i].imag();
    }
  }
  return out;
}

class CgFunction : public torch::autograd::Function<CgFunction> {
 public:
  static torch::Tensor forward(AutogradContext* ctx, torch::Tensor rhs, torch::Tensor mu, int64_t batch,
                               int64_t iterations) {
    const double m = mu.item<double>();
    torch::Tensor x = cg_run(rhs, m, *reinterpret_cast<const OperatorBatch*>(batch), static_cast<int>(iterations));
    ctx->saved_data["batch"] = batch;
    ctx->saved_data["iterations"] = iterations;
    ctx->saved_data["mu"] = m;
    ctx->save_for_backward({x});
    return x;
  }
  static variable_list backward(AutogradContext* ctx, variable_list grads) {
    const double m = ctx->saved_data["mu"].toDouble();
    const int iterations = static_cast<int>(ctx->saved_data["iterations"].toInt());
    torch::Tensor g_rhs = cg_run(grads[0], m, batch_of(ctx), iterations);
    torch::Tensor x = ctx->get_saved_variables()[0];
    torch::Tensor g_mu = -(g_rhs * x).sum();
    return {g_rhs, g_mu, torch::Tensor(), torch::Tensor()};
  }
};

}  // namespace

OperatorBatch make_operator_batch(std::vector<std::shared_ptr<const LinearOperator>> ops) {
  RECOFOLD_CHECK(!ops.empty()) << "empty operator batch";
  OperatorBatch b;
  const Shape d = ops[0]->domain_shape();
  RECOFOLD_CHECK(d.rank() == 2) << "bridge operators take 2-D images, got " << d.to_string();
  b.ny = d[0];
  b.nx = d[1];
  for (const auto& op : ops) {
    RECOFOLD_CHECK(op->domain_shape() == d) << "operator domains differ in one batch";
    b.range_size = std::max(b.range_size, op->range_size());
  }
  b.scale.assign(ops.size(), 1.0f);
  b.ops = std::move(ops);
  return b;
}

torch::Tensor op_apply(const torch::Tensor& x, const OperatorBatch& batch) {
  return OperatorFunction::apply(x, handle(batch), static_cast<int64_t>(Mode::kApply));
}
torch::Tensor op_adjoint(const torch::Tensor& y, const OperatorBatch& batch) {
  return OperatorFunction::apply(y, handle(batch), static_cast<int64_t>(Mode::kAdjoint));
}
torch::Tensor op_normal(const torch::Tensor& x, const OperatorBatch& batch) {
  return OperatorFunction::apply(x, handle(batch), static_cast<int64_t>(Mode::kNormal));
}

torch::Tensor cg_solve(const torch::Tensor& rhs, const torch::Tensor& mu, const OperatorBatch& batch, int iterations) {
  return CgFunction::apply(rhs, mu.reshape({}), handle(batch), static_cast<int64_t>(iterations));
}

TrainingThreadScope::TrainingThreadScope(int threads)
    : omp_threads_(omp_get_max_threads()), fft_threads_(fft_threads()), torch_threads_(torch::get_num_threads()) {
  if (threads > 0) omp_set_num_threads(threads);
  align_torch_threads();
  set_fft_threads(1);
}

TrainingThreadScope::~TrainingThreadScope() {
  omp_set_num_threads(omp_threads_);
  set_fft_threads(fft_threads_);
  if (torch::get_num_threads() != torch_threads_) torch::set_num_threads(torch_threads_);
}

void align_torch_threads() {
  const int wanted = omp_get_max_threads();  // read before torch's lazy initialisation can change it
  if (torch::get_num_threads() != wanted) torch::set_num_threads(wanted);
}

torch::Tensor to_channels(const VecC& v, const Shape& shape) {
  std::vector<int64_t> sizes{2};
  for (Index d : shape.dims) sizes.push_back(d);
  torch::Tensor t = torch::empty(sizes);
  float* p = t.data_ptr<float>();
  const Index n = v.size();
  for (Index i = 0; i < n; ++i) {
    p[i] = v[i].real();
    p[n + i] = v[i].imag();
  }
  return t;
}

VecC from_channels(const torch::Tensor& t_in) {
  torch::Tensor t = t_in.detach().to(torch::kFloat32).contiguous();
  const Index n = t.numel() / 2;
  const float* p = t.data_ptr<float>();
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(p[i], p[n + i]);
  return v;
}

}  // namespace recofold::internal
