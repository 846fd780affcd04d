// SPDX-License-Identifier: Apache-2.0
// Unit tests of the priors: each prox minimises its objective, closed forms, boxes, names, validation.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <memory>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/finite_diff.h"
#include "recofold/priors/constrained.h"
#include "recofold/priors/l2.h"
#include "recofold/priors/prior_spec.h"
#include "recofold/priors/shrinkage.h"
#include "recofold/priors/tv.h"
#include "recofold/priors/wavelet_l1.h"
#include "recofold/priors/zero_prior.h"

namespace recofold {
namespace {

const Shape kShape{16, 16};

VecC random_vector(Index n, Rng& rng, bool real_only = false) {
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(float(rng.normal()), real_only ? 0.f : float(rng.normal()));
  return v;
}

// ---------------------------------------------------------------------------
// Prox checks that bite: a certified distance to the true minimiser.
//
// For a prior that is a weighted norm of an analysis transform,
// R(u) = g(K u) with g a norm, the prox objective (with an optional box C)
//   P(u) = 1/2 ||u - v||^2 + theta g(K u) + i_C(u)
// has the dual (standard Fenchel duality, written out here from memory)
//   D(q) = 1/2 dist(v - K^H q, C)^2 + Re<K^H q, v> - 1/2 ||K^H q||^2,
// for any q in the dual ball {g°(q) <= theta} (g° the dual norm), and weak
// duality P(u) >= P* >= D(q). P is 1-strongly convex, so
//   1/2 ||u - u*||^2 <= P(u) - P* <= P(u) - D(q):
// any feasible q certifies how far the prox output u can be from the exact
// minimiser u*. The test gets a near-optimal q from a long accelerated
// projected-gradient ascent on D in double precision (the dual solver does
// not have to be trusted: a poor q only loosens the bound, it can never make
// a wrong u pass). Unlike random perturbations of u (which a prox moved 12 %
// toward its input, or a single FGP iteration, both pass), this bound sees
// every direction at once.

// The analysis form in double precision: K, K^H, the dual-ball projection and g.
struct DualProblem {
  Index n = 0, m = 0;  // image and transform sizes
  std::function<void(const std::vector<cdouble>&, std::vector<cdouble>&)> k, kh;
  std::function<void(std::vector<cdouble>&, double)> project_ball;  // onto {g°(q) <= theta}
  std::function<double(const std::vector<cdouble>&)> g;             // g(z)
  double k_norm_squared = 8.0;                                       // bound of ||K||^2
  const Box* box = nullptr;
};

// TV with Neumann or periodic forward differences, as tv.h defines it, in double.
DualProblem tv_dual_problem(const Shape& shape, bool isotropic, DiffBoundary boundary) {
  DualProblem d;
  const Index ny = shape[0], nx = shape[1], n = ny * nx;
  const bool periodic = boundary == DiffBoundary::kPeriodic;
  d.n = n;
  d.m = 2 * n;
  d.k = [=](const std::vector<cdouble>& x, std::vector<cdouble>& z) {
    z.assign(size_t(2 * n), cdouble(0.0));
    for (Index r = 0; r < ny; ++r)
      for (Index c = 0; c < nx; ++c) {
        const Index i = r * nx + c;
        if (r + 1 < ny || periodic) z[size_t(i)] = x[size_t(((r + 1) % ny) * nx + c)] - x[size_t(i)];
        if (c + 1 < nx || periodic) z[size_t(n + i)] = x[size_t(r * nx + (c + 1) % nx)] - x[size_t(i)];
      }
  };
  d.kh = [=](const std::vector<cdouble>& z, std::vector<cdouble>& x) {
    x.assign(size_t(n), cdouble(0.0));
    for (Index r = 0; r < ny; ++r)
      for (Index c = 0; c < nx; ++c) {
        const Index i = r * nx + c;
        if (r + 1 < ny || periodic) {
          x[size_t(((r + 1) % ny) * nx + c)] += z[size_t(i)];
          x[size_t(i)] -= z[size_t(i)];
        }
        if (c + 1 < nx || periodic) {
          x[size_t(r * nx + (c + 1) % nx)] += z[size_t(n + i)];
          x[size_t(i)] -= z[size_t(n + i)];
        }
      }
  };
  d.project_ball = [=](std::vector<cdouble>& q, double theta) {
    for (Index i = 0; i < n; ++i) {
      cdouble& a = q[size_t(i)];
      cdouble& b = q[size_t(n + i)];
      if (isotropic) {
        const double m = std::sqrt(std::norm(a) + std::norm(b));
        if (m > theta) {
          a *= theta / m;
          b *= theta / m;
        }
      } else {
        for (cdouble* e : {&a, &b}) {
          const double m = std::abs(*e);
          if (m > theta) *e *= theta / m;
        }
      }
    }
  };
  d.g = [=](const std::vector<cdouble>& z) {
    double s = 0.0;
    for (Index i = 0; i < n; ++i) {
      const double a = std::norm(z[size_t(i)]), b = std::norm(z[size_t(n + i)]);
      s += isotropic ? std::sqrt(a + b) : std::sqrt(a) + std::sqrt(b);
    }
    return s;
  };
  return d;
}

// Weighted l1 of orthogonal wavelet coefficients (wavelet_l1.h) through the
// prior's transform (checked against PyWavelets elsewhere) and its published
// per-coefficient weights.
DualProblem wavelet_dual_problem(const WaveletL1Prior& p) {
  DualProblem d;
  const Index n = p.transform().domain_size();
  d.n = d.m = n;
  d.k_norm_squared = 1.0;  // orthogonal
  const WaveletTransform* w = &p.transform();
  auto through = [w](bool forward, const std::vector<cdouble>& in, std::vector<cdouble>& out) {
    VecC a(Index(in.size())), b;
    for (size_t i = 0; i < in.size(); ++i) a[Index(i)] = cfloat(in[i]);
    if (forward)
      w->apply(a, b);
    else
      w->adjoint(a, b);
    out.resize(size_t(b.size()));
    for (Index i = 0; i < b.size(); ++i) out[size_t(i)] = cdouble(b[i]);
  };
  d.k = [through](const std::vector<cdouble>& x, std::vector<cdouble>& z) { through(true, x, z); };
  d.kh = [through](const std::vector<cdouble>& z, std::vector<cdouble>& x) { through(false, z, x); };
  const std::vector<float> weights = p.coefficient_weights();
  d.project_ball = [weights](std::vector<cdouble>& q, double theta) {
    for (size_t i = 0; i < q.size(); ++i) {
      const double bound = theta * weights[i], m = std::abs(q[i]);
      if (m > bound) q[i] = m > 0 ? q[i] * (bound / m) : cdouble(0.0);
    }
  };
  d.g = [weights](const std::vector<cdouble>& z) {
    double s = 0.0;
    for (size_t i = 0; i < z.size(); ++i) s += weights[i] * std::abs(z[i]);
    return s;
  };
  return d;
}

std::vector<cdouble> to_double(const VecC& v) {
  std::vector<cdouble> out(size_t(v.size()));
  for (Index i = 0; i < v.size(); ++i) out[size_t(i)] = cdouble(v[i]);
  return out;
}

double squared_distance(const std::vector<cdouble>& a, const std::vector<cdouble>& b) {
  double s = 0.0;
  for (size_t i = 0; i < a.size(); ++i) s += std::norm(a[i] - b[i]);
  return s;
}

cdouble box_project(const Box& box, cdouble z) {
  return cdouble(std::min(std::max(z.real(), box.lower), box.upper), box.real ? 0.0 : z.imag());
}

// D(q) for a q inside the dual ball.
double dual_value(const DualProblem& d, const std::vector<cdouble>& v, const std::vector<cdouble>& q) {
  std::vector<cdouble> s;
  d.kh(q, s);
  double dist2 = 0.0, re_sv = 0.0, s2 = 0.0;
  for (size_t i = 0; i < s.size(); ++i) {
    const cdouble z = v[i] - s[i];
    if (d.box) dist2 += std::norm(z - box_project(*d.box, z));
    re_sv += (std::conj(s[i]) * v[i]).real();
    s2 += std::norm(s[i]);
  }
  return 0.5 * dist2 + re_sv - 0.5 * s2;
}

// P(u): +inf when u leaves the box (beyond float rounding of the bounds).
double primal_value(const DualProblem& d, const std::vector<cdouble>& v, const std::vector<cdouble>& u, double theta) {
  if (d.box) {
    for (const cdouble& z : u) {
      const double re = z.real();
      const double lo = static_cast<float>(d.box->lower), hi = static_cast<float>(d.box->upper);
      if (re < lo || re > hi || (d.box->real && z.imag() != 0.0)) return std::numeric_limits<double>::infinity();
    }
  }
  std::vector<cdouble> z;
  d.k(u, z);
  return 0.5 * squared_distance(u, v) + theta * d.g(z);
}

// Near-optimal dual point: FISTA ascent on D (gradient K P_C(v - K^H q),
// Lipschitz <= ||K||^2), projected onto the ball, in double.
std::vector<cdouble> solve_dual(const DualProblem& d, const std::vector<cdouble>& v, double theta, int iterations) {
  std::vector<cdouble> q(size_t(d.m), cdouble(0.0)), q_prev = q, y = q, s, u(size_t(d.n)), grad;
  const double step = 1.0 / d.k_norm_squared;
  double t = 1.0;
  for (int k = 0; k < iterations; ++k) {
    d.kh(y, s);
    for (size_t i = 0; i < u.size(); ++i) u[i] = d.box ? box_project(*d.box, v[i] - s[i]) : v[i] - s[i];
    d.k(u, grad);
    q_prev.swap(q);
    for (size_t i = 0; i < q.size(); ++i) q[i] = y[i] + step * grad[i];
    d.project_ball(q, theta);
    const double t_next = 0.5 * (1.0 + std::sqrt(1.0 + 4.0 * t * t));
    for (size_t i = 0; i < q.size(); ++i) y[i] = q[i] + ((t - 1.0) / t_next) * (q[i] - q_prev[i]);
    t = t_next;
  }
  return q;
}

// A dual point for (v, theta) and what it certifies.
struct DualCertificate {
  const DualProblem* problem = nullptr;
  std::vector<cdouble> v;
  double theta = 0.0;
  double dual = 0.0;           // D(q) <= P*
  double reference_gap = 0.0;  // P(u_ref) - D(q) of the dual solver's own primal point u_ref = P_C(v - K^H q)
  double input_norm = 0.0;     // ||v||

  // Certified upper bound of ||u - u*||.
  double distance_bound(const VecC& u) const {
    return std::sqrt(2.0 * std::max(0.0, primal_value(*problem, v, to_double(u), theta) - dual));
  }
};

DualCertificate certify(const DualProblem& d, const VecC& v_in, double theta, int dual_iterations = 20000) {
  DualCertificate c;
  c.problem = &d;
  c.v = to_double(v_in);
  c.theta = theta;
  const std::vector<cdouble> q = solve_dual(d, c.v, theta, dual_iterations);
  c.dual = dual_value(d, c.v, q);
  std::vector<cdouble> s, u_ref(c.v.size());
  d.kh(q, s);
  for (size_t i = 0; i < c.v.size(); ++i) u_ref[i] = d.box ? box_project(*d.box, c.v[i] - s[i]) : c.v[i] - s[i];
  c.reference_gap = primal_value(d, c.v, u_ref, theta) - c.dual;
  c.input_norm = std::sqrt(squared_distance(c.v, std::vector<cdouble>(c.v.size())));
  return c;
}

// The prox of `prior` at (v, step) is within `relative` * ||v|| of the exact
// minimiser, certified by duality.
::testing::AssertionResult prox_is_optimal(const Prior& prior, const DualCertificate& c, double step,
                                           double relative) {
  VecC v(Index(c.v.size())), u;
  for (size_t i = 0; i < c.v.size(); ++i) v[Index(i)] = cfloat(c.v[i]);
  prior.prox(v, step, u);
  const double limit = relative * c.input_norm;
  const double bound = c.distance_bound(u);
  if (!(bound <= limit))
    return ::testing::AssertionFailure() << prior.name() << ": ||prox - minimiser|| <= " << bound
                                         << " certified, limit " << limit;
  return ::testing::AssertionSuccess() << prior.name() << ": ||prox - minimiser|| <= " << bound << " (limit "
                                       << limit << ")";
}

// A deliberately broken prox: the correct one moved 12 % of the way back to its input.
class ShrunkTowardInput final : public Prior {
 public:
  explicit ShrunkTowardInput(std::unique_ptr<Prior> inner) : Prior(inner->weight()), inner_(std::move(inner)) {}
  double value(const VecC& x) const override { return inner_->value(x); }
  void prox(const VecC& v, double step, VecC& out) const override {
    VecC u;
    inner_->prox(v, step, u);
    out = u + 0.12f * (v - u);
  }
  std::unique_ptr<Prior> clone() const override { return std::make_unique<ShrunkTowardInput>(inner_->clone()); }
  std::string name() const override { return "12 % toward input: " + inner_->name(); }

 private:
  std::unique_ptr<Prior> inner_;
};

// Certified optimality for `good`, and a certified failure for both broken
// variants (the 12 % shrink of `good`; `one_step`, when given, e.g. a single
// FGP iteration): the check is shown to bite on the same input.
void expect_prox_optimal_and_check_bites(const Prior& good, const Prior* one_step, const DualProblem& d,
                                         bool real_only, uint64_t seed, double relative = 1e-3) {
  Rng rng(seed);
  const VecC v = random_vector(d.n, rng, real_only);
  const double step = 0.7;
  const DualCertificate c = certify(d, v, step * good.weight());
  // The dual point's own slack uses at most 1 % of the (squared) budget, so
  // the bound measures the prox, not the reference.
  const double limit = relative * c.input_norm;
  ASSERT_LE(c.reference_gap, 0.5 * (0.1 * limit) * (0.1 * limit)) << "dual reference not converged";
  EXPECT_TRUE(prox_is_optimal(good, c, step, relative));
  ShrunkTowardInput shrunk(good.clone());
  EXPECT_FALSE(prox_is_optimal(shrunk, c, step, relative));
  if (one_step) {
    EXPECT_FALSE(prox_is_optimal(*one_step, c, step, relative));
  }
}

// The former TV prox (FGP on Eigen vectors with the FiniteDifference operator,
// nine vectors per call), kept as the reference the fused implementation must
// reproduce to float rounding.
void legacy_tv_prox(const Shape& shape, const TvOptions& options, const VecC& v_in, double theta, const Box* box,
                    VecC& out) {
  FiniteDifference diff(shape, options.boundary);
  const Index n = shape.size();
  const VecC v = v_in;
  VecC p = VecC::Zero(2 * n), p_prev = p, r = p;
  VecC x(n), x_prev = v, grad, dtr;
  const float inv_step = static_cast<float>(1.0 / (8.0 * theta));
  const float th = static_cast<float>(theta);
  double t = 1.0;
  auto primal = [&](const VecC& dual, VecC& result) {
    diff.adjoint(dual, dtr);
    result = v - th * dtr;
    if (box) box->project(result, result);
  };
  for (int k = 0; k < options.max_iterations; ++k) {
    primal(r, x);
    diff.apply(x, grad);
    p_prev.swap(p);
    p = r + inv_step * grad;
    for (Index i = 0; i < n; ++i) {
      if (options.isotropic) {
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
    if (options.tolerance > 0.0) {
      const double change = (x - x_prev).norm(), size = x.norm();
      if (k > 0 && change <= options.tolerance * std::max(size, 1e-30)) break;
      x_prev = x;
    }
  }
  primal(p, out);
}

TEST(SoftThreshold, MatchesClosedFormExactly) {
  EXPECT_EQ(soft_threshold(cfloat(3.f, 4.f), 1.0), cfloat(2.4f, 3.2f));  // |z| = 5 -> 4
  EXPECT_EQ(soft_threshold(cfloat(3.f, 4.f), 5.0), cfloat(0.f, 0.f));
  EXPECT_EQ(soft_threshold(cfloat(-2.f, 0.f), 0.5), cfloat(-1.5f, 0.f));
  EXPECT_EQ(soft_threshold(cfloat(0.f, 0.f), 0.0), cfloat(0.f, 0.f));
  cfloat a(3.f, 0.f), b(0.f, 4.f);
  group_soft_threshold(a, b, 2.5);  // norm 5 -> 2.5
  EXPECT_EQ(a, cfloat(1.5f, 0.f));
  EXPECT_EQ(b, cfloat(0.f, 2.f));
}

TEST(FiniteDifference, PassesAdjointTestAndNormBound) {
  for (DiffBoundary bnd : {DiffBoundary::kNeumann, DiffBoundary::kPeriodic}) {
    FiniteDifference d(Shape{12, 20}, bnd);
    Rng rng(3);
    const AdjointReport r = check_adjoint(d, rng);
    EXPECT_LT(r.relative_error, 1e-5) << d.name() << " " << r.to_string();
    const double l = estimate_norm_squared(d, 200, 4);
    EXPECT_LE(l, FiniteDifference::kNormSquaredBound * (1 + 1e-4)) << d.name();
    EXPECT_GT(l, 7.0) << d.name();  // close to the bound for these sizes
  }
}

TEST(FiniteDifference, NeumannLastDifferenceIsZeroAndPeriodicWraps) {
  const Shape s{3, 4};
  VecC x(12);
  for (Index i = 0; i < 12; ++i) x[i] = cfloat(float(i * i), 0.f);
  VecC y;
  FiniteDifference(s, DiffBoundary::kNeumann).apply(x, y);
  EXPECT_EQ(y[2 * 4 + 1], cfloat(0.f, 0.f));       // last row, axis 0
  EXPECT_EQ(y[12 + 0 * 4 + 3], cfloat(0.f, 0.f));  // last column, axis 1
  EXPECT_EQ(y[0], cfloat(16.f, 0.f));              // x[1,0] - x[0,0]
  FiniteDifference(s, DiffBoundary::kPeriodic).apply(x, y);
  EXPECT_EQ(y[12 + 3], cfloat(0.f - 9.f, 0.f));  // x[0,0] - x[0,3]
}

TEST(ZeroPrior, ProxIsIdentity) {
  ZeroPrior p;
  Rng rng(1);
  const VecC v = random_vector(10, rng);
  VecC u;
  p.prox(v, 3.0, u);
  EXPECT_EQ((u - v).norm(), 0.f);
}

TEST(L2Prior, ProxMatchesClosedFormAndMinimisesObjective) {
  Rng rng(2);
  const VecC ref = random_vector(kShape.size(), rng);
  L2Prior p(kShape, 0.8, ref);
  const VecC v = random_vector(kShape.size(), rng);
  VecC u;
  p.prox(v, 0.5, u);
  const VecC expected = (v + 0.4f * ref) / 1.4f;
  EXPECT_LT((u - expected).norm(), 1e-6 * expected.norm());
  // The closed form bites: the 12 % shrink toward the input misses it.
  ShrunkTowardInput shrunk(p.clone());
  shrunk.prox(v, 0.5, u);
  EXPECT_GT((u - expected).norm(), 1e-2 * expected.norm());
  VecC g;
  p.gradient(v, g);
  EXPECT_LT((g - 0.8f * (v - ref)).norm(), 1e-6 * g.norm());
}

TEST(WaveletL1Prior, ProxMinimisesObjectiveForEveryFamily) {
  for (auto fam : {WaveletFamily::kDb1, WaveletFamily::kDb2, WaveletFamily::kDb3, WaveletFamily::kDb4}) {
    WaveletL1Options o;
    o.family = fam;
    o.levels = 2;
    const WaveletL1Prior p(kShape, 0.9, o);
    expect_prox_optimal_and_check_bites(p, nullptr, wavelet_dual_problem(p), false, 20, 2e-3);
  }
}

TEST(WaveletL1Prior, LeavesApproximationBandUnpenalisedByDefault) {
  WaveletL1Options o;
  o.levels = 2;
  WaveletL1Prior p(kShape, 1.0, o);
  VecC c = VecC::Zero(kShape.size());
  c[0] = cfloat(5.f, 0.f);  // an approximation coefficient
  VecC x;
  p.transform().adjoint(c, x);
  EXPECT_LT(p.value(x), 1e-5);
  VecC u;
  p.prox(x, 1.0, u);
  EXPECT_LT((u - x).norm(), 1e-5 * x.norm());
  o.penalise_approximation = true;
  EXPECT_NEAR(WaveletL1Prior(kShape, 1.0, o).value(x), 5.0, 1e-5);
}

TEST(WaveletL1Prior, BandWeightsScaleThresholdsPerBand) {
  WaveletL1Options o;
  o.levels = 1;
  o.band_weights = {0.0, 0.0, 1.0, 2.0};  // approx, LH free, HL x1, HH x2
  WaveletL1Prior p(kShape, 1.0, o);
  const std::vector<float>& w = p.coefficient_weights();
  EXPECT_EQ(w[0], 0.f);
  EXPECT_EQ(w[size_t(0 * 16 + 8)], 0.f);  // LH band (top-right)
  EXPECT_EQ(w[size_t(8 * 16 + 0)], 1.f);  // HL band (bottom-left)
  EXPECT_EQ(w[size_t(8 * 16 + 8)], 2.f);  // HH band
  expect_prox_optimal_and_check_bites(p, nullptr, wavelet_dual_problem(p), false, 21, 2e-3);
}

TEST(WaveletL1Prior, CycleSpinningIsAFunctionOfSeedAndCallOnly) {
  WaveletL1Options o;
  o.levels = 2;
  o.cycle_spin = true;
  o.cycle_spin_seed = 9;
  WaveletL1Prior a(kShape, 0.5, o), b(kShape, 0.5, o);
  WaveletL1Options plain = o;
  plain.cycle_spin = false;
  WaveletL1Prior unshifted(kShape, 0.5, plain);
  Rng rng(4);
  const VecC v = random_vector(kShape.size(), rng);
  VecC ua, ub, ua_again, u0, ref;
  // The same call index gives the same bytes, whatever was called before and on which copy.
  a.prox_at(v, 1.0, 3, ua);
  for (uint64_t k = 1; k <= 5; ++k) b.prox_at(v, 1.0, k, ub);
  b.prox_at(v, 1.0, 3, ub);
  EXPECT_EQ((ua - ub).norm(), 0.f);
  a.prox_at(v, 1.0, 7, ua_again);
  a.prox_at(v, 1.0, 3, ua_again);
  EXPECT_EQ((ua - ua_again).norm(), 0.f);
  std::unique_ptr<Prior> c = a.clone();
  VecC uc;
  c->prox_at(v, 1.0, 3, uc);
  EXPECT_EQ((ua - uc).norm(), 0.f);
  // prox() and call 0 are the unshifted exact prox.
  a.prox(v, 1.0, u0);
  unshifted.prox(v, 1.0, ref);
  EXPECT_EQ((u0 - ref).norm(), 0.f);
  // Some call in 1..8 draws a non-zero shift, and there the result differs from the unshifted prox
  // while it is the exact prox of R(shift(x)): shifting the input by the drawn shift and applying the
  // unshifted prox gives the same image shifted back.
  bool any_shift = false;
  for (uint64_t k = 1; k <= 8; ++k) {
    const auto [dy, dx] = a.cycle_shift(k);
    if (dy == 0 && dx == 0) continue;
    any_shift = true;
    VecC uk, vs, ps, back;
    a.prox_at(v, 1.0, k, uk);
    EXPECT_GT((uk - ref).norm(), 1e-4f * ref.norm()) << "call " << k;
    circular_shift(v, kShape, dy, dx, vs);
    unshifted.prox(vs, 1.0, ps);
    circular_shift(ps, kShape, -dy, -dx, back);
    EXPECT_LT((uk - back).norm(), 1e-5f * (1.0f + back.norm())) << "call " << k;
  }
  EXPECT_TRUE(any_shift);
  EXPECT_TRUE(a.varies_per_call());
  EXPECT_FALSE(unshifted.varies_per_call());
}

TEST(TvPrior, ProxIsCertifiedMinimiserAndCheckCatchesBrokenProx) {
  for (DiffBoundary bnd : {DiffBoundary::kNeumann, DiffBoundary::kPeriodic}) {
    for (bool iso : {true, false}) {
      for (bool real_only : {true, false}) {
        TvOptions o;
        o.isotropic = iso;
        o.boundary = bnd;
        o.max_iterations = 3000;
        o.tolerance = 1e-8;
        TvOptions one = o;
        one.max_iterations = 1;
        expect_prox_optimal_and_check_bites(TvPrior(kShape, 0.4, o), std::make_unique<TvPrior>(kShape, 0.4, one).get(),
                                            tv_dual_problem(kShape, iso, bnd), real_only, 30 + iso + 2 * real_only);
      }
    }
  }
}

TEST(TvPrior, DefaultSettingsGiveAnAccurateProx) {
  // 100 FGP iterations (the default) on a 64x48 piecewise-constant image with noise.
  const Shape s{48, 64};
  Rng rng(77);
  VecC v(s.size());
  for (Index r = 0; r < 48; ++r)
    for (Index c = 0; c < 64; ++c)
      v[r * 64 + c] = cfloat(float((r > 20 && c > 30 ? 1.0 : 0.2) + 0.1 * rng.normal()), 0.f);
  for (bool iso : {true, false}) {
    TvOptions o;
    o.isotropic = iso;
    const TvPrior p(s, 0.1, o);
    const DualProblem d = tv_dual_problem(s, iso, DiffBoundary::kNeumann);
    const DualCertificate c = certify(d, v, 1.0 * p.weight(), 3000);
    ASSERT_LE(c.reference_gap, 0.5 * std::pow(1e-3 * c.input_norm, 2));
    EXPECT_TRUE(prox_is_optimal(p, c, 1.0, 1e-2));
  }
}

TEST(TvPrior, FusedProxMatchesFormerImplementation) {
  // The single-precision fused prox against the former Eigen-vector FGP on
  // random inputs (real and complex, both boundaries, both TV forms, with and
  // without a box, 1 and many iterations, sizes with odd sides; 256x257
  // takes the multi-threaded path).
  Rng rng(91);
  int cases = 0;
  for (const Shape& s : {Shape{16, 16}, Shape{23, 37}, Shape{256, 257}}) {
    for (DiffBoundary bnd : {DiffBoundary::kNeumann, DiffBoundary::kPeriodic}) {
      for (bool iso : {true, false}) {
        for (int variant = 0; variant < 4; ++variant) {
          TvOptions o;
          o.isotropic = iso;
          o.boundary = bnd;
          o.max_iterations = variant == 0 ? 1 : (s.size() > 10000 ? 20 : 100);
          o.tolerance = variant == 3 ? 0.0 : 1e-5;
          const bool real_only = variant % 2 == 0;
          const VecC v = random_vector(s.size(), rng, real_only);
          const double theta = 0.05 + 0.5 * rng.uniform();
          const TvPrior p(s, theta, o);
          const Box box{-0.3, 0.8, variant != 1};
          const Box* b = variant >= 2 ? &box : nullptr;
          VecC ours, ref;
          if (b)
            p.prox_with_box(v, 1.0, *b, ours);
          else
            p.prox(v, 1.0, ours);
          legacy_tv_prox(s, o, v, theta, b, ref);
          EXPECT_LE((ours - ref).norm(), 1e-5 * ref.norm())
              << s.to_string() << " " << to_string(bnd) << (iso ? " iso" : " aniso") << " variant " << variant;
          ++cases;
        }
      }
    }
  }
  EXPECT_EQ(cases, 48);
}

TEST(TvPrior, RealInputGivesRealProx) {
  TvPrior p(kShape, 0.3);
  Rng rng(8);
  const VecC v = random_vector(kShape.size(), rng, true);
  VecC u;
  p.prox(v, 1.0, u);
  EXPECT_EQ(u.imag().cwiseAbs().maxCoeff(), 0.f);
}

TEST(TvPrior, ValueOfStepEdgeIsEdgeLength) {
  const Shape s{8, 8};
  VecC x = VecC::Zero(64);
  for (Index r = 0; r < 8; ++r)
    for (Index c = 4; c < 8; ++c) x[r * 8 + c] = cfloat(2.f, 0.f);
  EXPECT_NEAR(TvPrior(s, 1.0).value(x), 16.0, 1e-6);  // 8 rows, jump 2
  TvOptions aniso;
  aniso.isotropic = false;
  EXPECT_NEAR(TvPrior(s, 0.5, aniso).value(x), 8.0, 1e-6);
}

TEST(ConstrainedPrior, TvWithNonNegativityMinimisesConstrainedObjective) {
  TvOptions o;
  o.max_iterations = 3000;
  o.tolerance = 1e-8;
  const Box box;  // [0, inf) real
  ConstrainedPrior p(std::make_unique<TvPrior>(kShape, 0.4, o), box);
  TvOptions one = o;
  one.max_iterations = 1;
  ConstrainedPrior one_step(std::make_unique<TvPrior>(kShape, 0.4, one), box);
  DualProblem d = tv_dual_problem(kShape, true, DiffBoundary::kNeumann);
  d.box = &box;
  expect_prox_optimal_and_check_bites(p, &one_step, d, true, 40);
}

TEST(ConstrainedPrior, WaveletWithBoxUsesDykstraAndStaysFeasible) {
  WaveletL1Options o;
  o.levels = 2;
  const Box box{-0.5, 0.5, true};
  ConstrainedPrior p(std::make_unique<WaveletL1Prior>(kShape, 0.3, o), box, 300);
  DualProblem d = wavelet_dual_problem(static_cast<const WaveletL1Prior&>(p.inner()));
  d.box = &box;
  expect_prox_optimal_and_check_bites(p, nullptr, d, false, 41, 2e-3);
  Rng rng(6);
  VecC u;
  p.prox(random_vector(kShape.size(), rng), 1.0, u);
  EXPECT_EQ(box.violation(u), 0.0);
}

TEST(ConstrainedPrior, L2WithBoxIsProjectionOfProx) {
  const Box box{0.0, 1.0, true};
  ConstrainedPrior p(std::make_unique<L2Prior>(kShape, 2.0), box);
  {
    // Separable closed form: clip(v / (1 + step lambda)) for reference 0; the 12 % shrink misses it.
    Rng rng(42);
    const VecC v = random_vector(kShape.size(), rng, true);
    VecC u, expected(v.size());
    p.prox(v, 0.7, u);
    for (Index i = 0; i < v.size(); ++i) expected[i] = cfloat(std::clamp(v[i].real() / 2.4f, 0.f, 1.f), 0.f);
    EXPECT_LT((u - expected).norm(), 1e-6 * expected.norm());
    ShrunkTowardInput shrunk(p.clone());
    shrunk.prox(v, 0.7, u);
    EXPECT_GT((u - expected).norm(), 1e-2 * expected.norm());
  }
  VecC x = VecC::Constant(kShape.size(), cfloat(-1.f, 0.f));
  EXPECT_EQ(p.value(x), std::numeric_limits<double>::infinity());
  p.set_weight(3.0);
  EXPECT_EQ(p.inner().weight(), 3.0);
}

TEST(Priors, AnalysisProxMatchesClosedFormAndValueMatchesAnalysisValue) {
  // prox of step * lambda g on the transform domain against the closed forms
  // (written in double here): isotropic TV = group soft threshold of the two
  // difference components, wavelet = soft threshold by step * lambda * w_i,
  // l2 = w / (1 + step * lambda). A 12 % shrink toward the input misses each.
  Rng rng(12);
  const double step = 0.9;
  TvPrior tv(kShape, 0.6);
  WaveletL1Options wo;
  wo.family = WaveletFamily::kDb2;
  wo.levels = 2;
  WaveletL1Prior wav(kShape, 0.6, wo);
  L2Prior l2(kShape, 0.6);
  const Index n = kShape.size();
  auto soft = [](cdouble z, double t) {
    const double m = std::abs(z);
    return m <= t ? cdouble(0.0) : z * (1.0 - t / m);
  };
  const std::vector<const Prior*> priors{&tv, &wav, &l2};
  for (const Prior* p : priors) {
    const Index m = p->analysis_operator()->range_size();
    const VecC w = random_vector(m, rng);
    const double t = step * p->weight();
    VecC expected(m);
    if (p == &tv) {
      for (Index i = 0; i < n; ++i) {
        const cdouble a(w[i]), b(w[n + i]);
        const double norm = std::sqrt(std::norm(a) + std::norm(b));
        const double shrink = norm <= t ? 0.0 : 1.0 - t / norm;
        expected[i] = cfloat(a * shrink);
        expected[n + i] = cfloat(b * shrink);
      }
    } else if (p == &wav) {
      for (Index i = 0; i < m; ++i) expected[i] = cfloat(soft(cdouble(w[i]), t * wav.coefficient_weights()[size_t(i)]));
    } else {
      for (Index i = 0; i < m; ++i) expected[i] = cfloat(cdouble(w[i]) / (1.0 + t));
    }
    VecC z;
    p->analysis_prox(w, step, z);
    EXPECT_LE((z - expected).norm(), 1e-6 * w.norm()) << p->name();
    const VecC shrunk = z + 0.12f * (w - z);
    EXPECT_GT((shrunk - expected).norm(), 1e-2 * (w - expected).norm()) << p->name();
    // value(x) == analysis_value(K x).
    const VecC x = random_vector(kShape.size(), rng);
    VecC kx;
    p->analysis_operator()->apply(x, kx);
    EXPECT_NEAR(p->value(x), p->analysis_value(kx), 1e-4 * p->value(x)) << p->name();
  }
}

TEST(PriorSpec, ParsesEveryNameAndRejectsUnknown) {
  for (PriorKind k : {PriorKind::kNone, PriorKind::kL2, PriorKind::kWavelet, PriorKind::kTv, PriorKind::kTvAniso})
    EXPECT_EQ(parse_prior(to_string(k)), k);
  EXPECT_FALSE(parse_prior("tikhonov").has_value());
  EXPECT_NE(accepted_priors().find("tv-aniso"), std::string::npos);
}

TEST(PriorSpec, BuildsConstrainedAnisotropicTv) {
  PriorSpec spec;
  spec.kind = PriorKind::kTvAniso;
  spec.lambda = 0.1;
  spec.box = Box{};
  std::unique_ptr<Prior> p = make_prior(spec, kShape);
  EXPECT_NE(p->name().find("anisotropic"), std::string::npos) << p->name();
  EXPECT_NE(p->name().find("box"), std::string::npos) << p->name();
}

TEST(PriorSpec, ValidationNamesEachBadField) {
  PriorSpec spec;
  spec.kind = PriorKind::kWavelet;
  spec.lambda = -1.0;
  spec.wavelet.levels = 0;
  const std::vector<std::string> errors = spec.validate(kShape);
  ASSERT_EQ(errors.size(), 2u);
  EXPECT_EQ(errors[0].rfind("prior.lambda", 0), 0u) << errors[0];
  EXPECT_EQ(errors[1].rfind("wavelet.levels", 0), 0u) << errors[1];
  try {
    make_prior(spec, kShape);
    FAIL() << "make_prior accepted a negative lambda";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "prior.lambda");
  }
  TvOptions tv;
  tv.max_iterations = 0;
  tv.tolerance = -1;
  const auto tv_errors = tv.validate();
  ASSERT_EQ(tv_errors.size(), 2u);
  EXPECT_EQ(tv_errors[0].rfind("tv.max_iterations", 0), 0u);
  EXPECT_EQ(tv_errors[1].rfind("tv.tolerance", 0), 0u);
  WaveletL1Options w;
  w.levels = 5;  // 16 is not divisible by 32
  EXPECT_EQ(w.validate(kShape).size(), 1u);
  EXPECT_THROW(WaveletL1Prior(kShape, 1.0, w), InputError);
}

}  // namespace
}  // namespace recofold
