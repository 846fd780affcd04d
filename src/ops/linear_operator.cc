// SPDX-License-Identifier: Apache-2.0
// LinearOperator defaults, adjoint checker, power iteration and composition helpers.
#include "recofold/ops/linear_operator.h"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <utility>

#include "recofold/core/error.h"

namespace recofold {

void LinearOperator::normal(const VecC& x, VecC& out) const {
  VecC y;
  apply(x, y);
  adjoint(y, out);
}

std::string AdjointReport::to_string() const {
  std::ostringstream s;
  s.precision(9);
  s << "<Ax,y> = (" << lhs.real() << ", " << lhs.imag() << "), <x,A^H y> = (" << rhs.real() << ", "
    << rhs.imag() << "), relative error " << relative_error;
  return s.str();
}

cdouble dot(const VecC& a, const VecC& b) {
  RECOFOLD_CHECK(a.size() == b.size()) << "dot of sizes " << a.size() << " and " << b.size();
  double re = 0.0, im = 0.0;
  const Index n = a.size();
  auto term = [&](Index i, double& r, double& m) {
    const double ar = a[i].real(), ai = a[i].imag();
    const double br = b[i].real(), bi = b[i].imag();
    r += ar * br + ai * bi;  // conj(a) b
    m += ar * bi - ai * br;
  };
  // An explicit serial branch rather than an `if` clause: entering an
  // OpenMP region of one thread between regions of two makes the runtime
  // allocate a new team every time (solvers call this every iteration).
  if (n > 65536) {
#pragma omp parallel for reduction(+ : re, im) schedule(static)
    for (Index i = 0; i < n; ++i) term(i, re, im);
  } else {
    for (Index i = 0; i < n; ++i) term(i, re, im);
  }
  return {re, im};
}

double norm_squared(const VecC& a) {
  double s = 0.0;
  const Index n = a.size();
  if (n > 65536) {  // serial branch: see dot()
#pragma omp parallel for reduction(+ : s) schedule(static)
    for (Index i = 0; i < n; ++i) s += double(a[i].real()) * a[i].real() + double(a[i].imag()) * a[i].imag();
  } else {
    for (Index i = 0; i < n; ++i) s += double(a[i].real()) * a[i].real() + double(a[i].imag()) * a[i].imag();
  }
  return s;
}

namespace {

VecC random_vector(Index n, Rng& rng, bool real_only) {
  VecC v(n);
  for (Index i = 0; i < n; ++i) {
    const double re = rng.normal();
    const double im = real_only ? 0.0 : rng.normal();
    v[i] = cfloat(static_cast<float>(re), static_cast<float>(im));
  }
  return v;
}

class ScaledOperator final : public LinearOperator {
 public:
  ScaledOperator(std::shared_ptr<const LinearOperator> a, double s) : a_(std::move(a)), s_(s) {
    RECOFOLD_CHECK(a_ != nullptr);
  }
  void apply(const VecC& x, VecC& y) const override {
    a_->apply(x, y);
    y *= static_cast<float>(s_);
  }
  void adjoint(const VecC& y, VecC& x) const override {
    a_->adjoint(y, x);
    x *= static_cast<float>(s_);
  }
  void normal(const VecC& x, VecC& out) const override {
    a_->normal(x, out);
    out *= static_cast<float>(s_ * s_);
  }
  Shape domain_shape() const override { return a_->domain_shape(); }
  Shape range_shape() const override { return a_->range_shape(); }
  Index domain_size() const override { return a_->domain_size(); }
  Index range_size() const override { return a_->range_size(); }
  std::string name() const override {
    std::ostringstream s;
    s << s_ << " * (" << a_->name() << ")";
    return s.str();
  }

 private:
  std::shared_ptr<const LinearOperator> a_;
  double s_;
};

class ComposedOperator final : public LinearOperator {
 public:
  ComposedOperator(std::shared_ptr<const LinearOperator> a, std::shared_ptr<const LinearOperator> b)
      : a_(std::move(a)), b_(std::move(b)) {
    RECOFOLD_CHECK(a_ != nullptr && b_ != nullptr);
    RECOFOLD_CHECK(b_->range_size() == a_->domain_size())
        << "composed: B range " << b_->range_shape().to_string() << " vs A domain "
        << a_->domain_shape().to_string();
  }
  void apply(const VecC& x, VecC& y) const override {
    VecC t;
    b_->apply(x, t);
    a_->apply(t, y);
  }
  void adjoint(const VecC& y, VecC& x) const override {
    VecC t;
    a_->adjoint(y, t);
    b_->adjoint(t, x);
  }
  Shape domain_shape() const override { return b_->domain_shape(); }
  Shape range_shape() const override { return a_->range_shape(); }
  Index domain_size() const override { return b_->domain_size(); }
  Index range_size() const override { return a_->range_size(); }
  std::string name() const override { return "(" + a_->name() + ") o (" + b_->name() + ")"; }

 private:
  std::shared_ptr<const LinearOperator> a_, b_;
};

class IdentityOperator final : public LinearOperator {
 public:
  explicit IdentityOperator(Shape s) : shape_(std::move(s)) {}
  void apply(const VecC& x, VecC& y) const override { y = x; }
  void adjoint(const VecC& y, VecC& x) const override { x = y; }
  void normal(const VecC& x, VecC& out) const override { out = x; }
  Shape domain_shape() const override { return shape_; }
  Shape range_shape() const override { return shape_; }
  Index domain_size() const override { return shape_.size(); }
  Index range_size() const override { return shape_.size(); }
  std::string name() const override { return "identity " + shape_.to_string(); }
  bool absolute_sums(VecF& row_sums, VecF& column_sums) const override {
    row_sums.setOnes(shape_.size());
    column_sums.setOnes(shape_.size());
    return true;
  }

 private:
  Shape shape_;
};

}  // namespace

AdjointReport check_adjoint(const LinearOperator& op, Rng& rng, bool real_inputs) {
  const VecC x = random_vector(op.domain_size(), rng, real_inputs);
  const VecC y = random_vector(op.range_size(), rng, real_inputs);
  VecC ax, ahy;
  op.apply(x, ax);
  op.adjoint(y, ahy);
  RECOFOLD_CHECK(ax.size() == y.size()) << op.name() << ": apply gave " << ax.size() << " values, range is "
                                        << y.size();
  RECOFOLD_CHECK(ahy.size() == x.size()) << op.name() << ": adjoint gave " << ahy.size()
                                         << " values, domain is " << x.size();
  AdjointReport r;
  r.lhs = dot(ax, y);   // <Ax, y>
  r.rhs = dot(x, ahy);  // <x, A^H y>
  const double scale = std::max(std::abs(r.lhs), 1e-300);
  r.relative_error = std::abs(r.lhs - r.rhs) / scale;
  return r;
}

double estimate_norm_squared(const LinearOperator& op, int iterations, uint64_t seed) {
  RECOFOLD_CHECK(iterations > 0) << "power iteration needs at least one iteration";
  Rng rng(seed);
  VecC x = random_vector(op.domain_size(), rng, false);
  double n = std::sqrt(norm_squared(x));
  if (n == 0.0) return 0.0;
  x /= static_cast<float>(n);
  VecC ax;
  double lambda = 0.0;
  for (int it = 0; it < iterations; ++it) {
    op.normal(x, ax);
    lambda = dot(x, ax).real();  // Rayleigh quotient, x has unit norm
    n = std::sqrt(norm_squared(ax));
    if (!(n > 0.0) || !std::isfinite(n)) return std::isfinite(n) ? 0.0 : n;
    x = ax / static_cast<float>(n);
  }
  // The final norm ||A^H A x|| bounds the Rayleigh quotient from above and
  // converges to the same value; using the larger is safer for step sizes.
  return std::max(lambda, n);
}

std::unique_ptr<LinearOperator> scaled(std::shared_ptr<const LinearOperator> a, double s) {
  return std::make_unique<ScaledOperator>(std::move(a), s);
}

std::unique_ptr<LinearOperator> composed(std::shared_ptr<const LinearOperator> a,
                                         std::shared_ptr<const LinearOperator> b) {
  return std::make_unique<ComposedOperator>(std::move(a), std::move(b));
}

std::unique_ptr<LinearOperator> identity(Shape shape) {
  return std::make_unique<IdentityOperator>(std::move(shape));
}

}  // namespace recofold
