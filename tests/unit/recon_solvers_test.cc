// SPDX-License-Identifier: Apache-2.0
// Convergence and option tests of CG, ISTA, FISTA, ADMM and PDHG on small dense problems.
#include <gtest/gtest.h>

#include <Eigen/Dense>

#include <cmath>
#include <memory>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/dense_operator.h"
#include "recofold/priors/constrained.h"
#include "recofold/priors/l2.h"
#include "recofold/priors/tv.h"
#include "recofold/priors/wavelet_l1.h"
#include "recofold/priors/zero_prior.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/ista.h"
#include "recofold/recon/pdhg.h"

namespace recofold {
namespace {

Eigen::MatrixXcf random_matrix(Index m, Index n, uint64_t seed) {
  Rng rng(seed);
  Eigen::MatrixXcf a(m, n);
  const double s = 1.0 / std::sqrt(double(m));
  for (Index j = 0; j < n; ++j)
    for (Index i = 0; i < m; ++i) a(i, j) = cfloat(float(s * rng.normal()), float(s * rng.normal()));
  return a;
}

VecC random_vector(Index n, uint64_t seed) {
  Rng rng(seed);
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(float(rng.normal()), float(rng.normal()));
  return v;
}

// A piecewise-constant real 16x16 image (two rectangles on a background).
VecC blocky_image() {
  VecC x = VecC::Zero(256);
  for (Index r = 0; r < 16; ++r)
    for (Index c = 0; c < 16; ++c) {
      float v = 0.2f;
      if (r >= 3 && r < 12 && c >= 2 && c < 9) v = 1.0f;
      if (r >= 6 && r < 14 && c >= 10 && c < 15) v = 0.6f;
      x[r * 16 + c] = cfloat(v, 0.f);
    }
  return x;
}

// Undersampled problem: 128 random complex measurements of the 16x16 image plus noise.
struct SmallProblem {
  std::shared_ptr<DenseOperator> a;
  VecC truth, y;
};

SmallProblem undersampled_problem(Index m = 128, double noise = 0.01) {
  SmallProblem p;
  p.a = std::make_shared<DenseOperator>(random_matrix(m, 256, 77), Shape{16, 16}, Shape{m});
  p.truth = blocky_image();
  p.a->apply(p.truth, p.y);
  p.y += static_cast<float>(noise) * random_vector(m, 78);
  return p;
}

TEST(Cg, MatchesDenseNormalEquationSolution) {
  const Eigen::MatrixXcf m = random_matrix(60, 30, 1);
  DenseOperator a(m);
  const VecC y = random_vector(60, 2);
  const Eigen::MatrixXcd md = m.cast<cdouble>();
  for (double mu : {0.0, 0.3}) {
    const Eigen::MatrixXcd h = md.adjoint() * md + mu * Eigen::MatrixXcd::Identity(30, 30);
    const Eigen::VectorXcd expected = h.ldlt().solve(md.adjoint() * y.cast<cdouble>());
    CgOptions o;
    o.max_iterations = 100;
    o.tolerance = 1e-9;
    o.tikhonov = mu;
    VecC x;
    const SolverSummary s = solve_cg(o, a, y, x);
    const double err = (x.cast<cdouble>() - expected).norm() / expected.norm();
    EXPECT_LT(err, 1e-4) << "mu " << mu << ": " << s.brief_report();
    EXPECT_TRUE(s.is_usable());
  }
}

TEST(Cg, TikhonovWithReferenceMatchesDenseSolve) {
  const Eigen::MatrixXcf m = random_matrix(20, 30, 3);  // under-determined: the reference matters
  DenseOperator a(m);
  const VecC y = random_vector(20, 4), ref = random_vector(30, 5);
  const Eigen::MatrixXcd md = m.cast<cdouble>();
  const double mu = 0.5;
  const Eigen::MatrixXcd h = md.adjoint() * md + mu * Eigen::MatrixXcd::Identity(30, 30);
  const Eigen::VectorXcd expected = h.ldlt().solve(md.adjoint() * y.cast<cdouble>() + mu * ref.cast<cdouble>());
  CgOptions o;
  o.max_iterations = 100;
  o.tolerance = 1e-9;
  o.tikhonov = mu;
  VecC x;
  solve_cg(o, a, y, x, nullptr, &ref);
  EXPECT_LT((x.cast<cdouble>() - expected).norm() / expected.norm(), 1e-4);
}

TEST(Ista, ObjectiveNeverIncreases) {
  const SmallProblem p = undersampled_problem();
  WaveletL1Options wo;
  wo.family = WaveletFamily::kDb2;
  wo.levels = 2;
  WaveletL1Prior prior(Shape{16, 16}, 0.05, wo);
  IstaOptions o;
  o.max_iterations = 500;
  o.relative_tolerance = 0.0;
  VecC x;
  const SolverSummary s = solve_ista(o, *p.a, prior, p.y, x);
  ASSERT_EQ(s.iterations.size(), 500u);
  for (size_t k = 1; k < s.iterations.size(); ++k)
    EXPECT_LE(s.iterations[k].objective, s.iterations[k - 1].objective * (1 + 1e-6)) << "iteration " << k + 1;
  EXPECT_LT(s.iterations.back().objective, 0.5 * s.iterations.front().objective);
}

TEST(Fista, ReachesIsta500ObjectiveWithin150Iterations) {
  const SmallProblem p = undersampled_problem();
  WaveletL1Options wo;
  wo.family = WaveletFamily::kDb2;
  wo.levels = 2;
  WaveletL1Prior prior(Shape{16, 16}, 0.05, wo);
  const double step = 1.0 / (1.05 * estimate_norm_squared(*p.a, 100));
  IstaOptions io;
  io.max_iterations = 500;
  io.relative_tolerance = 0.0;
  io.step_size = step;
  VecC xi;
  const double ista500 = solve_ista(io, *p.a, prior, p.y, xi).iterations.back().objective;
  for (bool restart : {true, false}) {
    FistaOptions fo;
    fo.max_iterations = 150;
    fo.relative_tolerance = 0.0;
    fo.step_size = step;
    fo.adaptive_restart = restart;
    VecC xf;
    const SolverSummary s = solve_fista(fo, *p.a, prior, p.y, xf);
    int reached = -1;
    for (const IterationRecord& r : s.iterations)
      if (r.objective <= ista500) {
        reached = r.iteration;
        break;
      }
    EXPECT_GT(reached, 0) << "restart " << restart << ": FISTA 150 " << s.iterations.back().objective
                          << " vs ISTA 500 " << ista500;
    RecordProperty(restart ? "fista_restart_iterations_to_ista500" : "fista_iterations_to_ista500", reached);
  }
}

TEST(Fista, EstimatesStepByPowerIterationAndReportsIt) {
  const SmallProblem p = undersampled_problem();
  ZeroPrior none;
  FistaOptions o;
  o.max_iterations = 5;
  VecC x;
  const SolverSummary s = solve_fista(o, *p.a, none, p.y, x);
  const double l = s.values.at("lipschitz");
  const Eigen::MatrixXcd md = p.a->matrix().cast<cdouble>();
  const double exact = Eigen::JacobiSVD<Eigen::MatrixXcd>(md).singularValues()(0);
  EXPECT_NEAR(l, exact * exact, 0.02 * exact * exact);
  EXPECT_NEAR(s.values.at("step_size"), 1.0 / (1.05 * l), 1e-12);
}

TEST(Pdhg, TvWithBoxGapFallsBelow1e3) {
  const SmallProblem p = undersampled_problem(100, 0.02);
  TvOptions tvo;
  const Box box{0.0, 2.0, true};
  ConstrainedPrior prior(std::make_unique<TvPrior>(Shape{16, 16}, 0.05, tvo), box);
  PdhgOptions o;
  o.max_iterations = 4000;
  o.relative_tolerance = 0.0;
  o.gap_tolerance = 1e-4;
  VecC x;
  const SolverSummary s = solve_pdhg(o, *p.a, prior, p.y, x);
  const IterationRecord last = *s.last();
  const double rel_gap = last.gap / std::max(1.0, std::abs(last.objective));
  EXPECT_LT(rel_gap, 1e-3) << s.brief_report();
  EXPECT_GT(s.iterations.front().gap, 10 * last.gap);
  EXPECT_EQ(box.violation(x), 0.0);
  RecordProperty("pdhg_relative_gap", std::to_string(rel_gap));
  RecordProperty("pdhg_iterations", static_cast<int>(s.iterations.size()));
}

TEST(Pdhg, UnconstrainedTvAgreesWithAdmmAndFista) {
  const SmallProblem p = undersampled_problem(100, 0.02);
  TvOptions tvo;
  tvo.max_iterations = 200;
  TvPrior prior(Shape{16, 16}, 0.05, tvo);
  PdhgOptions po;
  po.max_iterations = 4000;
  po.relative_tolerance = 0.0;
  po.gap_tolerance = 1e-6;
  VecC xp;
  const SolverSummary sp = solve_pdhg(po, *p.a, prior, p.y, xp);
  AdmmOptions ao;
  ao.max_iterations = 400;
  ao.relative_tolerance = 1e-7;
  ao.cg_iterations = 20;
  VecC xa;
  const SolverSummary sa = solve_admm(ao, *p.a, prior, p.y, xa);
  FistaOptions fo;
  fo.max_iterations = 1000;
  fo.relative_tolerance = 1e-8;
  VecC xf;
  const SolverSummary sf = solve_fista(fo, *p.a, prior, p.y, xf);
  const double fp = sp.last()->objective, fa = sa.last()->objective, ff = sf.last()->objective;
  EXPECT_NEAR(fa, fp, 1e-3 * fp) << sa.brief_report() << " / " << sp.brief_report();
  EXPECT_NEAR(ff, fp, 1e-3 * fp) << sf.brief_report() << " / " << sp.brief_report();
  EXPECT_LT((xa - xp).norm() / xp.norm(), 2e-2);
}

TEST(Admm, WaveletMatchesFistaObjective) {
  const SmallProblem p = undersampled_problem();
  WaveletL1Options wo;
  wo.family = WaveletFamily::kDb1;
  wo.levels = 2;
  WaveletL1Prior prior(Shape{16, 16}, 0.05, wo);
  AdmmOptions ao;
  ao.max_iterations = 500;
  ao.relative_tolerance = 1e-7;
  ao.cg_iterations = 20;
  VecC xa;
  const SolverSummary sa = solve_admm(ao, *p.a, prior, p.y, xa);
  FistaOptions fo;
  fo.max_iterations = 2000;
  fo.relative_tolerance = 1e-9;
  VecC xf;
  const SolverSummary sf = solve_fista(fo, *p.a, prior, p.y, xf);
  EXPECT_NEAR(sa.last()->objective, sf.last()->objective, 1e-3 * sf.last()->objective)
      << sa.brief_report() << " / " << sf.brief_report();
}

TEST(Admm, BoxConstrainedTvMatchesPdhg) {
  const SmallProblem p = undersampled_problem(100, 0.05);
  const Box box{0.0, 0.8, true};  // active: the image reaches 1
  ConstrainedPrior prior(std::make_unique<TvPrior>(Shape{16, 16}, 0.05), box);
  AdmmOptions ao;
  ao.max_iterations = 600;
  ao.relative_tolerance = 1e-7;
  ao.cg_iterations = 20;
  VecC xa;
  solve_admm(ao, *p.a, prior, p.y, xa);
  PdhgOptions po;
  po.max_iterations = 5000;
  po.relative_tolerance = 0.0;
  po.gap_tolerance = 1e-6;
  VecC xp;
  solve_pdhg(po, *p.a, prior, p.y, xp);
  EXPECT_EQ(box.violation(xa), 0.0);
  EXPECT_LT((xa - xp).norm() / xp.norm(), 1e-2);
  VecC r;
  p.a->apply(xa, r);
  const double fa = 0.5 * norm_squared(r - p.y) + prior.value(xa);
  p.a->apply(xp, r);
  const double fp = 0.5 * norm_squared(r - p.y) + prior.value(xp);
  EXPECT_NEAR(fa, fp, 2e-3 * fp);
}

TEST(Admm, RejectsPriorWithoutAnalysisForm) {
  const SmallProblem p = undersampled_problem();
  ZeroPrior none;
  VecC x;
  try {
    solve_admm(AdmmOptions{}, *p.a, none, p.y, x);
    FAIL() << "ADMM accepted the zero prior";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "admm.prior");
  }
}

TEST(Solvers, RejectMeasurementOfWrongSize) {
  const SmallProblem p = undersampled_problem();
  ZeroPrior none;
  VecC x, y_short = p.y.head(10);
  try {
    solve_fista(FistaOptions{}, *p.a, none, y_short, x);
    FAIL() << "FISTA accepted a short measurement";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "fista.measurement");
  }
}

TEST(Solvers, BadOptionValuesAreNamedByValidate) {
  CgOptions cg;
  cg.max_iterations = 0;
  cg.tikhonov = -1;
  auto e = cg.validate();
  ASSERT_EQ(e.size(), 2u);
  EXPECT_EQ(e[0].rfind("cg.max_iterations = 0", 0), 0u) << e[0];
  EXPECT_EQ(e[1].rfind("cg.tikhonov", 0), 0u) << e[1];

  IstaOptions ista;
  ista.relative_tolerance = -1;
  e = ista.validate();
  ASSERT_EQ(e.size(), 1u);
  EXPECT_EQ(e[0].rfind("ista.relative_tolerance", 0), 0u) << e[0];

  FistaOptions fista;
  fista.max_iterations = -3;
  fista.power_iterations = 0;
  fista.step_size = std::nan("");
  e = fista.validate();
  ASSERT_EQ(e.size(), 3u);
  EXPECT_EQ(e[0].rfind("fista.max_iterations", 0), 0u) << e[0];
  EXPECT_EQ(e[1].rfind("fista.step_size", 0), 0u) << e[1];
  EXPECT_EQ(e[2].rfind("fista.power_iterations", 0), 0u) << e[2];

  AdmmOptions admm;
  admm.cg_iterations = 0;
  e = admm.validate();
  ASSERT_EQ(e.size(), 1u);
  EXPECT_EQ(e[0].rfind("admm.cg_iterations", 0), 0u) << e[0];

  PdhgOptions pdhg;
  pdhg.tau = 0.1;  // sigma missing
  pdhg.gap_tolerance = -1;
  e = pdhg.validate();
  ASSERT_EQ(e.size(), 2u);
  EXPECT_EQ(e[0].rfind("pdhg.tau", 0), 0u) << e[0];
  EXPECT_EQ(e[1].rfind("pdhg.gap_tolerance", 0), 0u) << e[1];

  // The solvers throw InputError naming the first bad field.
  const SmallProblem p = undersampled_problem();
  VecC x;
  try {
    solve_cg(cg, *p.a, p.y, x);
    FAIL() << "solve_cg accepted invalid options";
  } catch (const InputError& err) {
    EXPECT_EQ(err.field(), "cg.max_iterations");
  }
}

TEST(Pdhg, RejectsStepsViolatingTheStabilityCondition) {
  const SmallProblem p = undersampled_problem();
  TvPrior prior(Shape{16, 16}, 0.05);
  PdhgOptions o;
  o.tau = 1.0;
  o.sigma = 1.0;
  VecC x;
  try {
    solve_pdhg(o, *p.a, prior, p.y, x);
    FAIL() << "PDHG accepted tau*sigma*||K||^2 >= 1";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "pdhg.tau");
  }
}

TEST(SolverSummary, HistoryTableHasOneRowPerIteration) {
  const SmallProblem p = undersampled_problem();
  L2Prior prior(Shape{16, 16}, 0.1);
  IstaOptions o;
  o.max_iterations = 7;
  o.relative_tolerance = 0.0;
  VecC x;
  const SolverSummary s = solve_ista(o, *p.a, prior, p.y, x);
  const Table t = s.history_table();
  ASSERT_EQ(t.columns.size(), 6u);
  EXPECT_EQ(t.columns[1], "objective");
  EXPECT_EQ(t.rows.shape, (Shape{7, 6}));
  EXPECT_EQ(t.rows.data[6 * 6 + 0], 7.0);
  EXPECT_DOUBLE_EQ(t.rows.data[6 * 6 + 1], s.iterations.back().objective);
  EXPECT_EQ(t.text_attrs.at("termination"), "max-iterations");
  EXPECT_GT(t.number_attrs.at("step_size"), 0.0);
  EXPECT_NE(s.brief_report().find("ista: max-iterations after 7 iterations"), std::string::npos) << s.brief_report();
}

}  // namespace
}  // namespace recofold
