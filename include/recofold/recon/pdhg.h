// SPDX-License-Identifier: Apache-2.0
// PDHG (Chambolle-Pock) for least squares + analysis prior (TV) + box, with the primal-dual gap.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/ops/linear_operator.h"
#include "recofold/priors/prior.h"
#include "recofold/recon/solver_summary.h"

namespace recofold {

// Chambolle & Pock (JMIV 2011), algorithm 1 with theta = 1, for
//   minimise_x  F1(A x) + F2(K x) + G(x),
//   F1(w) = 1/2||w - y||^2,  F2 = lambda g (the prior's analysis form, e.g. TV),
//   G = i_C for a ConstrainedPrior's box C (else 0).
// Dual variables p (range of A) and q (range of K):
//   p <- (p + sA (A xbar - y)) / (1 + sA)                 (prox of sA F1*)
//   q <- q + sK K xbar - sK prox_{lambda g / sK}((q + sK K xbar)/sK)   (Moreau)
//   x+ <- P_C(x - tau (A^H p + K^H q)),   xbar <- 2 x+ - x
// Step sizes: block-diagonal dual steps (Pock & Chambolle, ICCV 2011, from
// memory) sA = balance / ||A||^2, sK = balance / ||K||^2 and
// tau = 0.99 / (2 balance), so tau (sA ||A||^2 + sK ||K||^2) < 1; ||A||^2 by
// power iteration, ||K||^2 by power iteration too (8 bounds it for TV).
// Diagonal preconditioning (Pock & Chambolle, ICCV 2011, lemma 2 with
// alpha = 1, from memory; opt-in, see `preconditioning`): when A and K both report the sums of their
// absolute entries (LinearOperator::absolute_sums: the Joseph projector, the
// finite differences, the identity) the steps become per-entry,
// applied to the blocks scaled to comparable norms, w_A = b / sqrt(max_i
// sum_j |A_ij| max_j sum_i |A_ij|) (Schur's bound on ||A||) and w_K likewise:
//   sigma_A,i = w_A / sum_j |A_ij|,   sigma_K = w_K / max_i sum_j |K_ij|,
//   tau_j = 0.99 / (w_A sum_i |A_ij| + w_K sum_i |K_ij|),
// b = diagonal_balance, which keeps ||Sigma^1/2 [A; K] T^1/2|| < 1 (the lemma
// for [w_A A; w_K K]; taking K's largest row sum for every row of K only
// shrinks Sigma). The K block keeps one
// scalar step so the prior's prox (coupled across gradient components) stays
// exact; the data term's conjugate prox is separable, so sigma_A may vary.
// Rows of A with no entries get sigma w_A, columns with none tau 0.99 / b.
// Explicit tau and sigma (same sigma for both blocks) may be given instead and
// must satisfy tau sigma (||A||^2 + ||K||^2) < 1.
// Gap: P(x) - D(p, q) with D = -F1*(p) - F2*(q) - G*(-A^H p - K^H q),
// F1*(p) = 1/2||p||^2 + Re<p, y>; G* is the box's support function. When C is
// unbounded (or absent) G* is taken over C intersected with |Re|,|Im| <= R,
// R = 2 max|x| + 1 (a partial gap in the sense of Chambolle & Pock 2011,
// section 3): exact for a bounded box.
enum class PdhgPreconditioning {
  kScalar,     // the block-scalar steps above (default)
  kAutomatic,  // diagonal when both operators report absolute sums, else scalar
  kDiagonal,   // diagonal; InputError when an operator cannot report its sums
};

struct PdhgOptions {
  int max_iterations = 500;          // >= 1
  double tau = 0.0;                  // primal step; <= 0 with sigma <= 0: automatic (above)
  double sigma = 0.0;                // dual step; set both or neither
  // > 0, the automatic steps' dual/primal balance. 1 is the symmetric
  // choice; 5 reached the data fit in about 10x fewer iterations on a 128^2,
  // 60-view CT problem (recon_end_to_end_test) and is the default.
  double balance = 5.0;
  PdhgPreconditioning preconditioning = PdhgPreconditioning::kScalar;
  // > 0, b of the diagonal steps. On the 128^2, 60-view CT problem of
  // recon_end_to_end_test (TV, x >= 0) b = 10 did best of 0.3..10; it reached
  // a relative objective error of 1e-4 in 302 iterations against 328 for
  // scalar steps with balance 10 and 479 with the default 5: a small gain,
  // not the halving the step balance alone nearly gives, so the scalar steps
  // stay the default.
  double diagonal_balance = 10.0;
  int power_iterations = 50;         // for ||A||^2 and ||K||^2, >= 1
  double relative_tolerance = 1e-6;  // stop when ||x_k - x_{k-1}|| / ||x_k|| <= this; >= 0
  // Stop when gap <= gap_tolerance * max(1, |P(x)|); 0 = never; needs record_gap.
  double gap_tolerance = 0.0;
  bool record_gap = true;  // objective and gap per iteration (one extra A apply, K and K^H)

  std::vector<std::string> validate() const;
};

// `prior`: an analysis-form prior, a ConstrainedPrior around one, or a ZeroPrior
// (K absent) possibly inside a ConstrainedPrior; otherwise InputError
// ("pdhg.prior"). Summary values: "tau", "sigma_a", "sigma_k", "norm_a_squared",
// "norm_k_squared", "gap" (last), "diagonal" (1 with diagonal steps, then
// "tau" and "sigma_a" are the largest entries and "tau_min", "sigma_a_min"
// the smallest; the norms are not estimated and reported as 0).
SolverSummary solve_pdhg(const PdhgOptions& options, const LinearOperator& a, const Prior& prior, const VecC& y,
                         VecC& x, ProgressSink* progress = nullptr);

}  // namespace recofold
