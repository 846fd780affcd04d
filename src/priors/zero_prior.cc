// SPDX-License-Identifier: Apache-2.0
// The zero prior.
#include "recofold/priors/zero_prior.h"

namespace recofold {

double ZeroPrior::value(const VecC&) const { return 0.0; }

void ZeroPrior::prox(const VecC& v, double, VecC& out) const {
  if (&out != &v) out = v;
}

void ZeroPrior::gradient(const VecC& x, VecC& g) const { g.setZero(x.size()); }

bool ZeroPrior::prox_with_box(const VecC& v, double, const Box& box, VecC& out) const {
  box.project(v, out);
  return true;
}

}  // namespace recofold
