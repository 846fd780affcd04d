// SPDX-License-Identifier: Apache-2.0
// Default implementations of the optional Prior methods.
#include "recofold/priors/prior.h"

#include <cmath>

#include "recofold/core/error.h"

namespace recofold {

void Prior::gradient(const VecC&, VecC&) const {
  RECOFOLD_CHECK(false) << "prior '" << name() << "' has no gradient (check has_gradient() first)";
}

bool Prior::prox_with_box(const VecC&, double, const Box&, VecC&) const { return false; }

double Prior::analysis_value(const VecC&) const {
  RECOFOLD_CHECK(false) << "prior '" << name() << "' has no analysis form";
  return 0.0;
}

void Prior::analysis_prox(const VecC&, double, VecC&) const {
  RECOFOLD_CHECK(false) << "prior '" << name() << "' has no analysis form";
}

double Prior::analysis_conjugate(const VecC&) const {
  RECOFOLD_CHECK(false) << "prior '" << name() << "' has no analysis form";
  return 0.0;
}

void Prior::set_weight(double lambda) {
  RECOFOLD_CHECK(std::isfinite(lambda) && lambda >= 0.0) << "prior weight " << lambda;
  weight_ = lambda;
}

}  // namespace recofold
