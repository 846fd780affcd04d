// SPDX-License-Identifier: Apache-2.0
// Tests of the unrolled scheme: equality with ISTA/FISTA, CG and replacement data consistency, slots, options.
#include <gtest/gtest.h>

#include <Eigen/Dense>

#include <cmath>
#include <memory>

#include "recofold/core/error.h"
#include "recofold/core/rng.h"
#include "recofold/ops/dense_operator.h"
#include "recofold/priors/wavelet_l1.h"
#include "recofold/priors/zero_prior.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/ista.h"
#include "recofold/recon/unrolled.h"

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

const Shape kShape{16, 16};

std::shared_ptr<WaveletL1Prior> wavelet_prior(double lambda) {
  WaveletL1Options o;
  o.family = WaveletFamily::kDb2;
  o.levels = 2;
  return std::make_shared<WaveletL1Prior>(kShape, lambda, o);
}

TEST(UnrolledScheme, GradientDcWithSoftThresholdEqualsIstaExactly) {
  DenseOperator a(random_matrix(128, 256, 1), kShape, Shape{128});
  const VecC y = random_vector(128, 2);
  auto prior = wavelet_prior(0.05);
  const double step = 0.3;
  const int k = 25;
  IstaOptions io;
  io.max_iterations = k;
  io.relative_tolerance = 0.0;
  io.step_size = step;
  VecC x_ista;
  solve_ista(io, a, *prior, y, x_ista);

  UnrolledOptions uo;
  uo.iterations = k;
  uo.dc_mode = DcMode::kGradient;
  UnrolledScheme scheme(uo, ista_schedule(k, step), std::make_shared<ProxPriorStep>(prior));
  VecC x_unrolled;
  const SolverSummary s = scheme.run(a, y, x_unrolled, nullptr, prior.get());
  ASSERT_EQ(x_unrolled.size(), x_ista.size());
  for (Index i = 0; i < x_ista.size(); ++i) ASSERT_EQ(x_unrolled[i], x_ista[i]) << "pixel " << i;
  EXPECT_EQ(s.iterations.size(), static_cast<size_t>(k));
  EXPECT_TRUE(std::isfinite(s.iterations.back().objective));
}

TEST(UnrolledScheme, FistaScheduleEqualsFistaWithoutRestartExactly) {
  DenseOperator a(random_matrix(128, 256, 3), kShape, Shape{128});
  const VecC y = random_vector(128, 4);
  auto prior = wavelet_prior(0.05);
  const double step = 0.3;
  const int k = 30;
  FistaOptions fo;
  fo.max_iterations = k;
  fo.relative_tolerance = 0.0;
  fo.step_size = step;
  fo.adaptive_restart = false;
  VecC x_fista;
  solve_fista(fo, a, *prior, y, x_fista);
  UnrolledOptions uo;
  uo.iterations = k;
  UnrolledScheme scheme(uo, fista_schedule(k, step), std::make_shared<ProxPriorStep>(prior));
  VecC x_unrolled;
  scheme.run(a, y, x_unrolled);
  EXPECT_EQ((x_unrolled - x_fista).norm(), 0.f);
}

TEST(UnrolledScheme, FistaScheduleFollowsBeckTeboulleMomentum) {
  const std::vector<IterationParameters> p = fista_schedule(4, 0.5);
  EXPECT_EQ(p[0].momentum, 0.0);
  EXPECT_EQ(p[1].momentum, 0.0);  // (t_1 - 1)/t_2 with t_1 = 1
  const double t2 = 0.5 * (1 + std::sqrt(5.0)), t3 = 0.5 * (1 + std::sqrt(1 + 4 * t2 * t2));
  EXPECT_DOUBLE_EQ(p[2].momentum, (t2 - 1) / t3);
  EXPECT_EQ(p[3].step, 0.5);
  EXPECT_EQ(p[3].prior_step, 0.5);
}

TEST(UnrolledScheme, CgDataConsistencyStepSolvesRegularisedNormalEquations) {
  const Eigen::MatrixXcf m = random_matrix(40, 30, 5);
  DenseOperator a(m);
  const VecC y = random_vector(40, 6), x0 = random_vector(30, 7);
  const double mu = 0.7;
  UnrolledOptions uo;
  uo.iterations = 1;
  uo.dc_mode = DcMode::kCgSolve;
  uo.cg_iterations = 60;
  uo.cg_tolerance = 1e-9;
  UnrolledScheme scheme(uo, half_quadratic_schedule(1, mu), std::make_shared<ProxPriorStep>(std::make_shared<ZeroPrior>()));
  VecC x = x0;
  scheme.run(a, y, x);
  const Eigen::MatrixXcd md = m.cast<cdouble>();
  const Eigen::VectorXcd expected = (md.adjoint() * md + mu * Eigen::MatrixXcd::Identity(30, 30))
                                        .ldlt()
                                        .solve(md.adjoint() * y.cast<cdouble>() + mu * x0.cast<cdouble>());
  EXPECT_LT((x.cast<cdouble>() - expected).norm() / expected.norm(), 1e-4);
  const std::vector<IterationParameters> hq = half_quadratic_schedule(3, 4.0);
  EXPECT_EQ(hq[2].prior_step, 0.25);
}

// A = diag(mask) Q with Q unitary: A A^H = diag(mask) is a projection, like a
// single-coil Cartesian masked orthonormal FFT. Q comes from a double
// precision QR: Eigen's single-precision complex QR loads a 4-byte aligned
// complex<float> constant as a double (_mm_load_sd in Eigen's SSE
// pset1<Packet2cf>), which UndefinedBehaviorSanitizer reports as misaligned.
DenseOperator masked_unitary(Index n, uint64_t seed, VecC* mask_out) {
  const Eigen::MatrixXcd g = random_matrix(n, n, seed).cast<cdouble>();
  Eigen::HouseholderQR<Eigen::MatrixXcd> qr(g);
  const Eigen::MatrixXcd qd = qr.householderQ() * Eigen::MatrixXcd::Identity(n, n);
  Eigen::MatrixXcf q = qd.cast<cfloat>();
  VecC mask(n);
  for (Index i = 0; i < n; ++i) mask[i] = cfloat(i % 3 == 0 ? 1.f : 0.f, 0.f);
  if (mask_out) *mask_out = mask;
  return DenseOperator(mask.asDiagonal() * q);
}

TEST(UnrolledScheme, ReplacementRestoresMeasuredSamples) {
  VecC mask;
  DenseOperator a = masked_unitary(48, 8, &mask);
  VecC y;
  a.apply(random_vector(48, 9), y);  // noiseless, zero on unmeasured rows
  UnrolledOptions uo;
  uo.iterations = 1;
  uo.dc_mode = DcMode::kReplace;
  uo.prior_first = true;  // output = the replacement itself
  IterationParameters p;
  p.prior_step = 0.0;
  UnrolledScheme scheme(uo, {p}, std::make_shared<ProxPriorStep>(std::make_shared<ZeroPrior>()));
  VecC x = random_vector(48, 10), ax;
  const VecC x_start = x;
  scheme.run(a, y, x);
  a.apply(x, ax);
  EXPECT_LT((ax - y).norm() / y.norm(), 1e-5);
  // The unmeasured part (null space of A) is kept.
  VecC a_start, back_start, back_now;
  a.apply(x_start, a_start);
  a.adjoint(a_start, back_start);
  a.adjoint(ax, back_now);
  EXPECT_LT(((x - back_now) - (x_start - back_start)).norm() / x.norm(), 1e-5);
}

TEST(UnrolledScheme, ReplacementRejectsOperatorThatIsNotAProjection) {
  DenseOperator a(random_matrix(20, 30, 11));
  const VecC y = random_vector(20, 12);
  UnrolledOptions uo;
  uo.iterations = 2;
  uo.dc_mode = DcMode::kReplace;
  UnrolledScheme scheme(uo, {IterationParameters{}}, std::make_shared<ProxPriorStep>(std::make_shared<ZeroPrior>()));
  VecC x;
  try {
    scheme.run(a, y, x);
    FAIL() << "replacement accepted a general operator";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "unrolled.dc_mode");
  }
  // An explicit projection is used as given.
  uo.projection = [](const VecC& in, const VecC&, VecC& out) { out = 0.5f * in; };
  UnrolledScheme with_projection(uo, {IterationParameters{}},
                                 std::make_shared<ProxPriorStep>(std::make_shared<ZeroPrior>()));
  VecC x2 = VecC::Constant(30, cfloat(4.f, 0.f));
  with_projection.run(a, y, x2);
  EXPECT_EQ(x2[0], cfloat(1.f, 0.f));
}

// A learned-style prior step: scales by a per-iteration factor; records the calls it gets.
class ScalingStep final : public PriorStep {
 public:
  explicit ScalingStep(std::vector<float> factors) : factors_(std::move(factors)) {}
  void apply(int iteration, const IterationParameters& params, const VecC& in, VecC& out) const override {
    out = factors_.at(static_cast<size_t>(iteration)) * static_cast<float>(params.prior_step) * in;
  }
  std::string name() const override { return "scaling"; }

 private:
  std::vector<float> factors_;
};

TEST(UnrolledScheme, PriorSlotReceivesIterationIndexAndParameters) {
  DenseOperator a(Eigen::MatrixXcf::Identity(4, 4));
  const VecC y = VecC::Zero(4);
  UnrolledOptions uo;
  uo.iterations = 3;
  std::vector<IterationParameters> ps(3);
  for (int k = 0; k < 3; ++k) {
    ps[size_t(k)].step = 0.5;  // x - 0.5 (x - 0) = 0.5 x
    ps[size_t(k)].prior_step = 1.0 + k;
  }
  UnrolledScheme scheme(uo, ps, std::make_shared<ScalingStep>(std::vector<float>{1.f, 10.f, 100.f}));
  VecC x = VecC::Constant(4, cfloat(1.f, 0.f));
  scheme.run(a, y, x);
  // 0.5*1*1 -> 0.5; 0.5*0.5*10*2 = 5; 0.5*5*100*3 = 750
  EXPECT_FLOAT_EQ(x[0].real(), 750.f);
}

TEST(UnrolledScheme, RejectsBadOptionsAndParametersNamingTheField) {
  auto step = std::make_shared<ProxPriorStep>(std::make_shared<ZeroPrior>());
  UnrolledOptions uo;
  uo.iterations = 0;
  EXPECT_EQ(uo.validate().size(), 1u);
  EXPECT_EQ(uo.validate()[0].rfind("unrolled.iterations", 0), 0u);
  try {
    UnrolledScheme(uo, {IterationParameters{}}, step);
    FAIL() << "accepted 0 iterations";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "unrolled.iterations");
  }
  uo.iterations = 3;
  try {
    UnrolledScheme(uo, std::vector<IterationParameters>(2), step);
    FAIL() << "accepted 2 parameter sets for 3 iterations";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "unrolled.parameters");
  }
  IterationParameters bad;
  bad.step = -1.0;
  try {
    UnrolledScheme(uo, {bad}, step);
    FAIL() << "accepted a negative step";
  } catch (const InputError& e) {
    EXPECT_EQ(e.field(), "unrolled.parameters[0].step");
  }
}

TEST(DcMode, ParsesEveryName) {
  for (DcMode m : {DcMode::kGradient, DcMode::kCgSolve, DcMode::kReplace}) EXPECT_EQ(parse_dc_mode(to_string(m)), m);
  EXPECT_FALSE(parse_dc_mode("exact").has_value());
}

}  // namespace
}  // namespace recofold
