// SPDX-License-Identifier: Apache-2.0
// Unit tests of the priors: each prox minimises its objective, closed forms, boxes, names, validation.
#include <gtest/gtest.h>

#include <cmath>
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

// 1/2 ||x - v||^2 + step * value(x), in double.
double prox_objective(const Prior& prior, const VecC& x, const VecC& v, double step) {
  return 0.5 * norm_squared(x - v) + step * prior.value(x);
}

// The prox output must beat 100 random perturbations of itself (relative
// sizes 1e-2 .. 1e-1 of the input's RMS). Perturbations of a constrained
// prior are projected onto its box so they stay feasible.
void expect_prox_minimises(const Prior& prior, bool real_only, uint64_t seed, const Box* box = nullptr) {
  Rng rng(seed);
  const VecC v = random_vector(kShape.size(), rng, real_only);
  const double step = 0.7;
  VecC u;
  prior.prox(v, step, u);
  const double best = prox_objective(prior, u, v, step);
  ASSERT_TRUE(std::isfinite(best)) << prior.name();
  const double rms = v.norm() / std::sqrt(double(v.size()));
  int worse = 0;
  for (int trial = 0; trial < 100; ++trial) {
    const double scale = rms * std::pow(10.0, -2.0 + (trial % 10) / 9.0);
    VecC w = u + static_cast<float>(scale) * random_vector(v.size(), rng, real_only);
    if (box) box->project(w, w);
    const double obj = prox_objective(prior, w, v, step);
    EXPECT_GE(obj, best - 1e-9 * std::abs(best)) << prior.name() << " trial " << trial;
    if (obj > best) ++worse;
  }
  EXPECT_EQ(worse, 100) << prior.name();
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
  expect_prox_minimises(p, false, 10);
  VecC g;
  p.gradient(v, g);
  EXPECT_LT((g - 0.8f * (v - ref)).norm(), 1e-6 * g.norm());
}

TEST(WaveletL1Prior, ProxMinimisesObjectiveForEveryFamily) {
  for (auto fam : {WaveletFamily::kDb1, WaveletFamily::kDb2, WaveletFamily::kDb3, WaveletFamily::kDb4}) {
    WaveletL1Options o;
    o.family = fam;
    o.levels = 2;
    expect_prox_minimises(WaveletL1Prior(kShape, 0.9, o), false, 20);
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
  expect_prox_minimises(p, false, 21);
}

TEST(WaveletL1Prior, CycleSpinningIsSeededAndMinimisesShiftedObjective) {
  WaveletL1Options o;
  o.levels = 2;
  o.cycle_spin = true;
  o.cycle_spin_seed = 9;
  WaveletL1Prior a(kShape, 0.5, o), b(kShape, 0.5, o);
  Rng rng(4);
  const VecC v = random_vector(kShape.size(), rng);
  VecC ua, ub, ua2;
  a.prox(v, 1.0, ua);
  b.prox(v, 1.0, ub);
  EXPECT_EQ((ua - ub).norm(), 0.f);  // same seed, same call number, same bytes
  a.prox(v, 1.0, ua2);
  EXPECT_EQ(a.prox_calls(), 2u);
  std::unique_ptr<Prior> c = a.clone();
  EXPECT_EQ(static_cast<WaveletL1Prior&>(*c).prox_calls(), 2u);
}

TEST(TvPrior, ProxMinimisesObjectiveIsotropicAndAnisotropicRealAndComplex) {
  for (bool iso : {true, false}) {
    for (bool real_only : {true, false}) {
      TvOptions o;
      o.isotropic = iso;
      o.max_iterations = 3000;
      o.tolerance = 1e-8;
      expect_prox_minimises(TvPrior(kShape, 0.4, o), real_only, 30 + iso);
    }
  }
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
  expect_prox_minimises(p, true, 40, &box);
}

TEST(ConstrainedPrior, WaveletWithBoxUsesDykstraAndStaysFeasible) {
  WaveletL1Options o;
  o.levels = 2;
  const Box box{-0.5, 0.5, true};
  ConstrainedPrior p(std::make_unique<WaveletL1Prior>(kShape, 0.3, o), box, 300);
  expect_prox_minimises(p, false, 41, &box);
  Rng rng(6);
  VecC u;
  p.prox(random_vector(kShape.size(), rng), 1.0, u);
  EXPECT_EQ(box.violation(u), 0.0);
}

TEST(ConstrainedPrior, L2WithBoxIsProjectionOfProx) {
  const Box box{0.0, 1.0, true};
  ConstrainedPrior p(std::make_unique<L2Prior>(kShape, 2.0), box);
  expect_prox_minimises(p, true, 42, &box);
  VecC x = VecC::Constant(kShape.size(), cfloat(-1.f, 0.f));
  EXPECT_EQ(p.value(x), std::numeric_limits<double>::infinity());
  p.set_weight(3.0);
  EXPECT_EQ(p.inner().weight(), 3.0);
}

TEST(Priors, AnalysisProxIsProxOfAnalysisValue) {
  // prox of lambda g on the transform domain, checked like any prox.
  Rng rng(12);
  std::vector<std::unique_ptr<Prior>> priors;
  priors.push_back(std::make_unique<TvPrior>(kShape, 0.6));
  WaveletL1Options wo;
  wo.family = WaveletFamily::kDb2;
  wo.levels = 2;
  priors.push_back(std::make_unique<WaveletL1Prior>(kShape, 0.6, wo));
  priors.push_back(std::make_unique<L2Prior>(kShape, 0.6));
  for (const auto& p : priors) {
    const Index m = p->analysis_operator()->range_size();
    const VecC w = random_vector(m, rng);
    VecC z;
    p->analysis_prox(w, 0.9, z);
    const double best = 0.5 * norm_squared(z - w) + 0.9 * p->analysis_value(z);
    for (int t = 0; t < 50; ++t) {
      const VecC zz = z + 0.05f * random_vector(m, rng);
      EXPECT_GT(0.5 * norm_squared(zz - w) + 0.9 * p->analysis_value(zz), best) << p->name();
    }
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
