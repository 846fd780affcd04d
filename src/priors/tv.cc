// SPDX-License-Identifier: Apache-2.0
// Total variation: value, analysis form and the FGP dual prox (Beck & Teboulle 2009).
#include "recofold/priors/tv.h"

#include <cmath>
#include <limits>
#include <sstream>

#include "recofold/core/error.h"
#include "recofold/priors/option_errors.h"
#include "recofold/priors/shrinkage.h"

namespace recofold {

std::vector<std::string> TvOptions::validate() const {
  std::vector<std::string> errors;
  if (max_iterations < 1)
    errors.push_back("tv.max_iterations = " + std::to_string(max_iterations) + "; must be >= 1");
  if (!(tolerance >= 0.0) || !std::isfinite(tolerance))
    errors.push_back("tv.tolerance = " + std::to_string(tolerance) + "; must be finite and >= 0");
  return errors;
}

TvPrior::TvPrior(Shape image_shape, double weight, TvOptions options)
    : Prior(weight), shape_(std::move(image_shape)), options_(options) {
  throw_if_invalid(options_.validate());
  if (!(weight >= 0.0) || !std::isfinite(weight))
    throw InputError("", "prior.lambda", "= " + std::to_string(weight) + "; must be finite and >= 0");
  diff_ = std::make_shared<FiniteDifference>(shape_, options_.boundary);
}

double TvPrior::total_variation(const VecC& x) const {
  VecC z;
  diff_->apply(x, z);
  const Index n = shape_.size();
  double s = 0.0;
  for (Index i = 0; i < n; ++i) {
    const double a = std::norm(z[i]), b = std::norm(z[n + i]);
    s += options_.isotropic ? std::sqrt(a + b) : std::sqrt(a) + std::sqrt(b);
  }
  return s;
}

double TvPrior::value(const VecC& x) const { return weight_ * total_variation(x); }

double TvPrior::analysis_value(const VecC& z) const {
  const Index n = shape_.size();
  double s = 0.0;
  for (Index i = 0; i < n; ++i) {
    const double a = std::norm(z[i]), b = std::norm(z[n + i]);
    s += options_.isotropic ? std::sqrt(a + b) : std::sqrt(a) + std::sqrt(b);
  }
  return weight_ * s;
}

void TvPrior::analysis_prox(const VecC& w, double step, VecC& out) const {
  const Index n = shape_.size();
  const double t = step * weight_;
  if (&out != &w) out = w;
  for (Index i = 0; i < n; ++i) {
    if (options_.isotropic) {
      group_soft_threshold(out[i], out[n + i], t);
    } else {
      out[i] = soft_threshold(out[i], t);
      out[n + i] = soft_threshold(out[n + i], t);
    }
  }
}

double TvPrior::analysis_conjugate(const VecC& q) const {
  const Index n = shape_.size();
  const double bound = weight_ * (1.0 + 1e-4) + 1e-12;
  for (Index i = 0; i < n; ++i) {
    const double a = std::norm(q[i]), b = std::norm(q[n + i]);
    const bool inside = options_.isotropic ? std::sqrt(a + b) <= bound : (std::sqrt(a) <= bound && std::sqrt(b) <= bound);
    if (!inside) return std::numeric_limits<double>::infinity();
  }
  return 0.0;
}

void TvPrior::prox(const VecC& v, double step, VecC& out) const { fgp(v, step * weight_, nullptr, out); }

bool TvPrior::prox_with_box(const VecC& v, double step, const Box& box, VecC& out) const {
  fgp(v, step * weight_, &box, out);
  return true;
}

void TvPrior::fgp(const VecC& v_in, double theta, const Box* box, VecC& out) const {
  const Index n = shape_.size();
  RECOFOLD_CHECK(v_in.size() == n) << "TV prox input size " << v_in.size() << " for " << shape_.to_string();
  const VecC v = v_in;  // copy: `out` may alias the input
  if (!(theta > 0.0)) {
    if (box)
      box->project(v, out);
    else
      out = v;
    return;
  }
  // Dual variables p (current), p_prev and the extrapolated r, each [2, ny, nx].
  VecC p = VecC::Zero(2 * n), p_prev = p, r = p;
  VecC x(n), x_prev = v, grad, dtr;
  const float inv_step = static_cast<float>(1.0 / (8.0 * theta));
  const float th = static_cast<float>(theta);
  double t = 1.0;
  auto primal = [&](const VecC& dual, VecC& result) {
    diff_->adjoint(dual, dtr);
    result = v - th * dtr;
    if (box) box->project(result, result);
  };
  for (int k = 0; k < options_.max_iterations; ++k) {
    primal(r, x);
    diff_->apply(x, grad);
    p_prev.swap(p);
    p = r + inv_step * grad;
    // Projection onto the dual unit ball.
    for (Index i = 0; i < n; ++i) {
      if (options_.isotropic) {
        const double m = std::sqrt(double(std::norm(p[i])) + double(std::norm(p[n + i])));
        if (m > 1.0) {
          const float s = static_cast<float>(1.0 / m);
          p[i] *= s;
          p[n + i] *= s;
        }
      } else {
        for (Index j : {i, n + i}) {
          const double m = std::abs(p[j]);
          if (m > 1.0) p[j] *= static_cast<float>(1.0 / m);
        }
      }
    }
    const double t_next = 0.5 * (1.0 + std::sqrt(1.0 + 4.0 * t * t));
    r = p + static_cast<float>((t - 1.0) / t_next) * (p - p_prev);
    t = t_next;
    if (options_.tolerance > 0.0) {
      const double change = (x - x_prev).norm(), size = x.norm();
      if (k > 0 && change <= options_.tolerance * std::max(size, 1e-30)) break;
      x_prev = x;
    }
  }
  primal(p, out);
}

std::string TvPrior::name() const {
  std::ostringstream s;
  s << "tv (" << (options_.isotropic ? "isotropic" : "anisotropic") << ", " << to_string(options_.boundary)
    << ") lambda " << weight_;
  return s.str();
}

}  // namespace recofold
