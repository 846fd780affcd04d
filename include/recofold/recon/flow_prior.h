// SPDX-License-Identifier: Apache-2.0
// The likelihood of a trained normalising flow as a prior of the classical solvers.
#pragma once

#include <string>

#include "recofold/priors/prior.h"
#include "recofold/recon/learned_backend.h"

namespace recofold {

// How a prox of the flow prior is computed.
struct FlowProxOptions {
  int inner_steps = 5;        // gradient steps per prox; >= 1
  int max_halvings = 30;      // backtracking halvings of the inner step per gradient step; >= 1
  double start_step = 1.0;    // first inner step length (1 is exact for a zero weight); > 0

  std::vector<std::string> validate() const;
};

// P(x) = lambda N(x), N(x) = -log p(x) of the flow in `model_file` (nats; the
// real part under the flow, the imaginary part under its Gaussian), used
// through its likelihood only:
//   value(x)    = lambda N(x)
//   gradient(x) = lambda grad N(x)          (autograd through the flow)
//   prox(v, s)  ~ argmin_u 1/2 ||u - v||^2 + s lambda N(u), computed by
//                 `inner_steps` gradient steps on that objective from u = v,
//                 with Barzilai-Borwein step lengths eta (Barzilai & Borwein,
//                 IMA J. Numer. Anal. 1988, their first formula; from memory;
//                 the first step is start_step) each made safe by
//                 backtracking to a sufficient decrease
//                 Phi(u') <= Phi(u) + Re<g, u' - u> + ||u' - u||^2 / (2 eta);
//                 with a box (prox_with_box) every step is projected onto it
//                 (projected gradient).
// So ISTA/FISTA with this prior are proximal-gradient methods whose prior
// step is a short descent on s lambda N: the prox is inexact (N is not convex
// and has no closed form), the iterate never increases the prox objective.
// The flow's weights are never changed. Images are in the flow's own units
// (those of the objects it was trained on).
// Thread safety: stateless; the backend serialises evaluations of one flow.
class FlowPrior final : public Prior {
 public:
  FlowPrior(const LearnedBackend& backend, std::string model_file, Index ny, Index nx, double lambda,
            FlowProxOptions options = {});

  double value(const VecC& x) const override;
  void prox(const VecC& v, double step, VecC& out) const override;
  bool has_gradient() const override { return true; }
  void gradient(const VecC& x, VecC& g) const override;
  bool prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const override;
  std::unique_ptr<Prior> clone() const override { return std::make_unique<FlowPrior>(*this); }
  std::string name() const override;

  // -log p(x) and (when `grad` is set) its gradient; WorkError when the flow gives a non-finite value.
  double neg_log_density(const VecC& x, VecC* grad) const;
  const std::string& model_file() const { return model_file_; }

 private:
  void descend(const VecC& v, double step, const Box* box, VecC& out) const;

  const LearnedBackend* backend_;
  std::string model_file_;
  Index ny_, nx_;
  FlowProxOptions options_;
};

}  // namespace recofold
