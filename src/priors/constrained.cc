// SPDX-License-Identifier: Apache-2.0
// Box-constrained prior: exact prox where the inner prior offers one, proximal Dykstra otherwise.
#include "recofold/priors/constrained.h"

#include <algorithm>
#include <limits>

#include "recofold/core/error.h"

namespace recofold {

ConstrainedPrior::ConstrainedPrior(std::unique_ptr<Prior> inner, Box box, int dykstra_iterations)
    : Prior(inner ? inner->weight() : 0.0), inner_(std::move(inner)), box_(box), dykstra_iterations_(dykstra_iterations) {
  RECOFOLD_CHECK(inner_ != nullptr) << "ConstrainedPrior needs an inner prior";
  if (!box_.validate().empty()) throw InputError("", "box", box_.validate().front());
  if (dykstra_iterations_ < 1)
    throw InputError("", "constrained.dykstra_iterations", "= " + std::to_string(dykstra_iterations_) + "; must be >= 1");
}

ConstrainedPrior::ConstrainedPrior(const ConstrainedPrior& other)
    : Prior(other.weight_), inner_(other.inner_->clone()), box_(other.box_), dykstra_iterations_(other.dykstra_iterations_) {}

double ConstrainedPrior::value(const VecC& x) const {
  const double scale = std::max(1.0, x.size() ? double(x.cwiseAbs().maxCoeff()) : 0.0);
  if (box_.violation(x) > 1e-6 * scale) return std::numeric_limits<double>::infinity();
  return inner_->value(x);
}

void ConstrainedPrior::prox(const VecC& v, double step, VecC& out) const { prox_at(v, step, 0, out); }

void ConstrainedPrior::prox_at(const VecC& v, double step, uint64_t call, VecC& out) const {
  const bool per_call = call != 0 && inner_->varies_per_call();
  if (!per_call && inner_->prox_with_box(v, step, box_, out)) return;
  // Proximal Dykstra for prox_{f + i_C}, f = step * inner.
  VecC x = v, p = VecC::Zero(v.size()), q = VecC::Zero(v.size()), y, xp;
  for (int k = 0; k < dykstra_iterations_; ++k) {
    xp = x + p;
    inner_->prox_at(xp, step, call, y);
    p = xp - y;
    xp = y + q;
    box_.project(xp, x);
    q = xp - x;
  }
  out = x;
}

std::string ConstrainedPrior::name() const { return inner_->name() + " + box " + box_.to_string(); }

void ConstrainedPrior::set_weight(double lambda) {
  inner_->set_weight(lambda);
  weight_ = lambda;
}

}  // namespace recofold
