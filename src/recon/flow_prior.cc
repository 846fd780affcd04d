// SPDX-License-Identifier: Apache-2.0
// Flow prior: -log p(x) of a trained flow, its gradient and a descent-based prox.
#include "recofold/recon/flow_prior.h"

#include <cmath>

#include "recofold/core/error.h"
#include "recofold/core/number_format.h"

namespace recofold {

std::vector<std::string> FlowProxOptions::validate() const {
  std::vector<std::string> e;
  if (inner_steps < 1) e.push_back("flow.inner_steps = " + std::to_string(inner_steps) + "; must be >= 1");
  if (max_halvings < 1) e.push_back("flow.max_halvings = " + std::to_string(max_halvings) + "; must be >= 1");
  if (!(start_step > 0.0) || !std::isfinite(start_step))
    e.push_back("flow.start_step = " + format_number(start_step) + "; must be > 0 and finite");
  return e;
}

FlowPrior::FlowPrior(const LearnedBackend& backend, std::string model_file, Index ny, Index nx, double lambda,
                     FlowProxOptions options)
    : Prior(lambda), backend_(&backend), model_file_(std::move(model_file)), ny_(ny), nx_(nx), options_(options) {
  const auto e = options_.validate();
  if (!e.empty()) throw InputError("", "flow", e.front());
}

double FlowPrior::neg_log_density(const VecC& x, VecC* grad) const {
  const double v = backend_->flow_neg_log_density(model_file_, ny_, nx_, x, grad);
  if (!std::isfinite(v))
    throw WorkError("the flow " + model_file_ + " gives a non-finite -log p (" + format_number(v) +
                    ") for the current image: its weights or the image are out of range");
  return v;
}

double FlowPrior::value(const VecC& x) const { return weight_ == 0.0 ? 0.0 : weight_ * neg_log_density(x, nullptr); }

void FlowPrior::gradient(const VecC& x, VecC& g) const {
  neg_log_density(x, &g);
  g *= static_cast<float>(weight_);
}

void FlowPrior::prox(const VecC& v, double step, VecC& out) const { descend(v, step, nullptr, out); }

bool FlowPrior::prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const {
  descend(v, step, &box, out);
  return true;
}

// Gradient descent on Phi(u) = 1/2 ||u - v||^2 + s N(u), s = step * lambda: Barzilai-Borwein step
// lengths (the first is start_step) made safe by backtracking to a sufficient decrease.
void FlowPrior::descend(const VecC& v, double step, const Box* box, VecC& out) const {
  const double s = step * weight_;
  VecC u = v;
  if (box) box->project(v, u);
  if (s == 0.0) {
    out = u;
    return;
  }
  VecC g_n, g_trial, trial, d, g_prev;
  double n_u = neg_log_density(u, &g_n);
  double phi = 0.5 * (u - v).squaredNorm() + s * n_u;
  double eta = options_.start_step;
  VecC g = (u - v) + static_cast<float>(s) * g_n;
  for (int k = 0; k < options_.inner_steps; ++k) {
    bool accepted = false;
    for (int h = 0; h < options_.max_halvings && !accepted; ++h) {
      trial = u - static_cast<float>(eta) * g;
      if (box) box->project(trial, trial);
      d = trial - u;
      const double dd = d.squaredNorm();
      if (dd == 0.0) break;  // stationary (or every move leaves the box)
      const double n_trial = neg_log_density(trial, &g_trial);
      const double phi_trial = 0.5 * (trial - v).squaredNorm() + s * n_trial;
      if (phi_trial <= phi + double(g.dot(d).real()) + dd / (2.0 * eta)) {
        u.swap(trial);
        g_n.swap(g_trial);
        n_u = n_trial;
        phi = phi_trial;
        accepted = true;
      } else {
        eta *= 0.5;
      }
    }
    if (!accepted) break;  // no decrease found: u is the best point
    g_prev.swap(g);
    g = (u - v) + static_cast<float>(s) * g_n;
    // BB1: <du, du> / <du, dg>, du = the step just taken (d), dg the change of the gradient.
    const double curvature = double(d.dot(g - g_prev).real());
    eta = curvature > 0.0 ? d.squaredNorm() / curvature : options_.start_step;
  }
  out = u;
}

std::string FlowPrior::name() const { return "flow (" + model_file_ + ") lambda " + format_number(weight_); }

}  // namespace recofold
