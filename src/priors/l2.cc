// SPDX-License-Identifier: Apache-2.0
// Tikhonov prior with optional reference image.
#include "recofold/priors/l2.h"

#include <cmath>
#include <limits>
#include <sstream>

#include "recofold/core/error.h"

namespace recofold {

L2Prior::L2Prior(Shape image_shape, double weight, VecC reference)
    : Prior(weight), shape_(std::move(image_shape)), reference_(std::move(reference)), identity_(identity(shape_)) {
  if (!(weight >= 0.0) || !std::isfinite(weight))
    throw InputError("", "prior.lambda", "= " + std::to_string(weight) + "; must be finite and >= 0");
  if (reference_.size() != 0 && reference_.size() != shape_.size())
    throw InputError("", "l2.reference",
                     "has " + std::to_string(reference_.size()) + " values, image shape is " + shape_.to_string());
}

double L2Prior::value(const VecC& x) const { return analysis_value(x); }

double L2Prior::analysis_value(const VecC& z) const {
  const double n2 = reference_.size() ? norm_squared(z - reference_) : norm_squared(z);
  return 0.5 * weight_ * n2;
}

void L2Prior::prox(const VecC& v, double step, VecC& out) const { analysis_prox(v, step, out); }

void L2Prior::analysis_prox(const VecC& w, double step, VecC& out) const {
  const double a = step * weight_;
  const float inv = static_cast<float>(1.0 / (1.0 + a));
  if (reference_.size())
    out = (w + static_cast<float>(a) * reference_) * inv;
  else
    out = w * inv;
}

double L2Prior::analysis_conjugate(const VecC& q) const {
  if (weight_ <= 0.0) return q.squaredNorm() == 0.f ? 0.0 : std::numeric_limits<double>::infinity();
  double c = norm_squared(q) / (2.0 * weight_);
  if (reference_.size()) c += dot(q, reference_).real();
  return c;
}

void L2Prior::gradient(const VecC& x, VecC& g) const {
  if (reference_.size())
    g = static_cast<float>(weight_) * (x - reference_);
  else
    g = static_cast<float>(weight_) * x;
}

bool L2Prior::prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const {
  VecC p;
  prox(v, step, p);
  box.project(p, out);
  return true;
}

std::string L2Prior::name() const {
  std::ostringstream s;
  s << "l2" << (reference_.size() ? " (with reference)" : "") << " lambda " << weight_;
  return s.str();
}

}  // namespace recofold
