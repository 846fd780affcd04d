// SPDX-License-Identifier: Apache-2.0
// Method names, method/prior compatibility and the common solve entry point.
#include "recofold/recon/solver_method.h"

#include "recofold/core/error.h"
#include "recofold/priors/l2.h"
#include "recofold/priors/zero_prior.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/ista.h"
#include "recofold/recon/pdhg.h"

namespace recofold {

std::string_view to_string(SolverMethod method) {
  switch (method) {
    case SolverMethod::kCg: return "cg";
    case SolverMethod::kIsta: return "ista";
    case SolverMethod::kFista: return "fista";
    case SolverMethod::kAdmm: return "admm";
    case SolverMethod::kPdhg: return "pdhg";
  }
  return "cg";
}

std::optional<SolverMethod> parse_solver_method(std::string_view text) {
  for (SolverMethod m : {SolverMethod::kCg, SolverMethod::kIsta, SolverMethod::kFista, SolverMethod::kAdmm,
                         SolverMethod::kPdhg})
    if (text == to_string(m)) return m;
  return std::nullopt;
}

std::string accepted_solver_methods() { return "cg, ista, fista, admm, pdhg"; }

std::vector<std::string> check_method_prior(SolverMethod method, PriorKind prior) {
  std::vector<std::string> e;
  if (method == SolverMethod::kCg && prior != PriorKind::kNone && prior != PriorKind::kL2)
    e.push_back("--prior = " + std::string(to_string(prior)) +
                "; method cg takes prior none or l2 (lambda is the Tikhonov weight)");
  if (method == SolverMethod::kAdmm && prior == PriorKind::kNone)
    e.push_back("--prior = none; method admm needs l2, wavelet, tv or tv-aniso");
  return e;
}

RegularisedSolve make_regularised_solve(SolverMethod method, const LinearOperator& a, const VecC& y, int iterations,
                                        ProgressSink* progress) {
  if (iterations < 1)
    throw InputError("", "--iters", "= " + std::to_string(iterations) + "; must be >= 1");
  const LinearOperator* ap = &a;
  const VecC* yp = &y;
  switch (method) {
    case SolverMethod::kCg:
      return [ap, yp, iterations, progress](const Prior& prior, VecC& x) {
        CgOptions o;
        o.max_iterations = iterations;
        const VecC* reference = nullptr;
        if (const auto* l2 = dynamic_cast<const L2Prior*>(&prior)) {
          o.tikhonov = l2->weight();
          if (l2->reference().size()) reference = &l2->reference();
        } else if (!dynamic_cast<const ZeroPrior*>(&prior)) {
          throw InputError("", "--prior", "'" + prior.name() + "'; method cg takes prior none or l2");
        }
        return solve_cg(o, *ap, *yp, x, progress, reference);
      };
    case SolverMethod::kIsta:
      return [ap, yp, iterations, progress](const Prior& prior, VecC& x) {
        IstaOptions o;
        o.max_iterations = iterations;
        return solve_ista(o, *ap, prior, *yp, x, progress);
      };
    case SolverMethod::kFista:
      return [ap, yp, iterations, progress](const Prior& prior, VecC& x) {
        FistaOptions o;
        o.max_iterations = iterations;
        return solve_fista(o, *ap, prior, *yp, x, progress);
      };
    case SolverMethod::kAdmm:
      return [ap, yp, iterations, progress](const Prior& prior, VecC& x) {
        AdmmOptions o;
        o.max_iterations = iterations;
        return solve_admm(o, *ap, prior, *yp, x, progress);
      };
    case SolverMethod::kPdhg:
      return [ap, yp, iterations, progress](const Prior& prior, VecC& x) {
        PdhgOptions o;
        o.max_iterations = iterations;
        return solve_pdhg(o, *ap, prior, *yp, x, progress);
      };
  }
  throw InputError("", "--method", "unknown method");
}

}  // namespace recofold
