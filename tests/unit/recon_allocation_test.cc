// SPDX-License-Identifier: Apache-2.0
// The solver loops allocate nothing after their first iteration (CG, ISTA, FISTA, ADMM, PDHG, unrolled).
//
// This test binary replaces the C allocator entry points (malloc, calloc,
// realloc, posix_memalign, aligned_alloc, memalign: Eigen, FFTW, the C++
// operator new and the OpenMP runtime all end there) by counting wrappers
// around glibc's own __libc_* functions. A progress sink records the count
// after every iteration; from the end of iteration 1 to the end of the last
// iteration it must not change, on every thread. The operators (SENSE with
// 8 coils, Joseph parallel and fan beams, finite differences) and priors (TV
// with and without a box, l2) are the ones the solvers run with in practice,
// at sizes that take their multi-threaded paths.
#include <execinfo.h>
#include <gtest/gtest.h>
#include <unistd.h>

#include <atomic>
#include <cmath>
#include <cstddef>
#include <cstdlib>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "recofold/core/progress.h"
#include "recofold/core/rng.h"
#include "recofold/ops/coil_maps.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/priors/constrained.h"
#include "recofold/priors/l2.h"
#include "recofold/priors/tv.h"
#include "recofold/recon/admm.h"
#include "recofold/recon/cg.h"
#include "recofold/recon/fista.h"
#include "recofold/recon/ista.h"
#include "recofold/recon/pdhg.h"
#include "recofold/recon/unrolled.h"

namespace {
std::atomic<long> g_allocations{0};
// RECOFOLD_ALLOC_TRACE=1: print the call stack of the first allocations made
// while armed (after the first iteration), to find where a loop allocates.
std::atomic<bool> g_armed{false};
std::atomic<int> g_traces{0};
thread_local bool t_in_trace = false;

void count_allocation() {
  g_allocations.fetch_add(1, std::memory_order_relaxed);
  if (g_armed.load(std::memory_order_relaxed) && !t_in_trace && g_traces.fetch_add(1) < 8) {
    t_in_trace = true;
    void* frames[32];
    const int n = backtrace(frames, 32);
    backtrace_symbols_fd(frames, n, 2);
    static const char sep[] = "----\n";
    (void)!write(2, sep, sizeof sep - 1);
    t_in_trace = false;
  }
}
}  // namespace

extern "C" {
void* __libc_malloc(size_t);
void* __libc_calloc(size_t, size_t);
void* __libc_realloc(void*, size_t);
void* __libc_memalign(size_t, size_t);
void __libc_free(void*);

void* malloc(size_t n) {
  count_allocation();
  return __libc_malloc(n);
}
void* calloc(size_t count, size_t n) {
  count_allocation();
  return __libc_calloc(count, n);
}
void* realloc(void* p, size_t n) {
  count_allocation();
  return __libc_realloc(p, n);
}
void free(void* p) { __libc_free(p); }
void* memalign(size_t alignment, size_t n) {
  count_allocation();
  return __libc_memalign(alignment, n);
}
void* aligned_alloc(size_t alignment, size_t n) {
  count_allocation();
  return __libc_memalign(alignment, n);
}
int posix_memalign(void** out, size_t alignment, size_t n) {
  count_allocation();
  void* p = __libc_memalign(alignment, n);
  if (!p) return 12;  // ENOMEM
  *out = p;
  return 0;
}
}

namespace recofold {
namespace {

// Records the allocation count at every update (into storage reserved up front).
class AllocationProbe final : public ProgressSink {
 public:
  AllocationProbe() { counts_.reserve(4096); }
  void update(int64_t, int64_t, const std::string&) override {
    counts_.push_back(g_allocations.load());
    if (std::getenv("RECOFOLD_ALLOC_TRACE")) g_armed.store(true);
  }
  void finish(const std::string&) override {}
  const std::vector<long>& counts() const { return counts_; }

 private:
  std::vector<long> counts_;
};

// Runs `solve` with a probe; expects >= `min_iterations` updates and no
// allocation between the first and the last.
void expect_no_allocation_after_first_iteration(const std::string& what, int min_iterations,
                                                const std::function<void(ProgressSink*)>& solve) {
  AllocationProbe probe;
  solve(&probe);
  g_armed.store(false);
  g_traces.store(0);
  const std::vector<long>& c = probe.counts();
  ASSERT_GE(c.size(), static_cast<size_t>(min_iterations)) << what;
  EXPECT_EQ(c.back() - c.front(), 0) << what << ": " << (c.back() - c.front()) << " allocations in iterations 2.."
                                     << c.size();
  // The probe sees allocations at all (the counting allocator is in place).
  static void* volatile probe_block;
  const long before = g_allocations.load();
  probe_block = std::malloc(64);
  std::free(probe_block);
  EXPECT_GT(g_allocations.load(), before) << "allocation counter not active";
}

VecC random_image(Index n, uint64_t seed, bool real_only) {
  Rng rng(seed);
  VecC v(n);
  for (Index i = 0; i < n; ++i) v[i] = cfloat(float(rng.normal()), real_only ? 0.f : float(rng.normal()));
  return v;
}

std::shared_ptr<MaskedFourier> sense_operator(Index n, int coils) {
  CoilArrayOptions co;
  co.coils = coils;
  NdArray<uint8_t> mask(Shape{n, n}, 0);
  for (Index r = 0; r < n; ++r)
    if (r % 3 == 0 || std::abs(double(r - n / 2)) < 8)
      for (Index c = 0; c < n; ++c) mask.data[size_t(r * n + c)] = 1;
  return std::make_shared<MaskedFourier>(n, n, mask, synthetic_coil_maps(co, n, n));
}

std::shared_ptr<JosephProjector> ct_operator(Index n, int views, bool fan) {
  CtGeometry g;
  g.ny = g.nx = n;
  g.pixel_size_mm = 1.0;
  g.detector_count = n + 8;
  for (int v = 0; v < views; ++v) g.angles_rad.push_back((fan ? 2.0 : 1.0) * M_PI * v / views);
  if (fan) {
    g.beam = CtBeam::kFan;
    g.source_to_isocenter_mm = 2.0 * n;
    g.source_to_detector_mm = 4.0 * n;
    g.detector_spacing_mm = 2.0;
  }
  return std::make_shared<JosephProjector>(g, 0.02);
}

TEST(SolverAllocations, CgOnSense) {
  const auto a = sense_operator(128, 8);
  VecC y;
  a->apply(random_image(a->domain_size(), 1, false), y);
  CgOptions o;
  o.max_iterations = 6;
  o.tolerance = 0.0;
  expect_no_allocation_after_first_iteration("cg", 6, [&](ProgressSink* p) {
    VecC x;
    solve_cg(o, *a, y, x, p);
  });
}

TEST(SolverAllocations, IstaAndFistaWithTvOnSenseAndJoseph) {
  const auto mri = sense_operator(256, 8);
  const auto ct = ct_operator(256, 60, false);
  for (const LinearOperator* a : std::vector<const LinearOperator*>{mri.get(), ct.get()}) {
    VecC y;
    a->apply(random_image(a->domain_size(), 2, a == ct.get()), y);
    TvPrior tv(a->domain_shape(), 0.01);
    IstaOptions io;
    io.max_iterations = 4;
    io.relative_tolerance = 0.0;
    io.power_iterations = 5;
    expect_no_allocation_after_first_iteration("ista " + a->name(), 4, [&](ProgressSink* p) {
      VecC x;
      solve_ista(io, *a, tv, y, x, p);
    });
    FistaOptions fo;
    fo.max_iterations = 4;
    fo.relative_tolerance = 0.0;
    fo.power_iterations = 5;
    expect_no_allocation_after_first_iteration("fista " + a->name(), 4, [&](ProgressSink* p) {
      VecC x;
      solve_fista(fo, *a, tv, y, x, p);
    });
  }
}

TEST(SolverAllocations, AdmmWithTvAndBoxOnJoseph) {
  const auto a = ct_operator(256, 60, false);
  VecC y;
  a->apply(random_image(a->domain_size(), 3, true), y);
  ConstrainedPrior prior(std::make_unique<TvPrior>(a->domain_shape(), 0.01), Box{});
  AdmmOptions o;
  o.max_iterations = 4;
  o.relative_tolerance = 0.0;
  o.cg_iterations = 3;
  expect_no_allocation_after_first_iteration("admm", 4, [&](ProgressSink* p) {
    VecC x;
    solve_admm(o, *a, prior, y, x, p);
  });
}

TEST(SolverAllocations, PdhgWithTvAndBoxOnParallelAndFanJoseph) {
  for (bool fan : {false, true}) {
    const auto a = ct_operator(fan ? 128 : 256, 60, fan);
    VecC y;
    a->apply(random_image(a->domain_size(), 4, true), y);
    ConstrainedPrior prior(std::make_unique<TvPrior>(a->domain_shape(), 0.01), Box{});
    PdhgOptions o;
    o.max_iterations = 5;
    o.relative_tolerance = 0.0;
    o.power_iterations = 5;
    expect_no_allocation_after_first_iteration(std::string("pdhg ") + (fan ? "fan" : "parallel"), 5,
                                               [&](ProgressSink* p) {
                                                 VecC x;
                                                 solve_pdhg(o, *a, prior, y, x, p);
                                               });
  }
}

TEST(SolverAllocations, UnrolledGradientAndCgSteps) {
  const auto a = sense_operator(128, 8);
  VecC y;
  a->apply(random_image(a->domain_size(), 5, false), y);
  auto step = std::make_shared<ProxPriorStep>(std::make_shared<TvPrior>(a->domain_shape(), 0.01));
  for (DcMode mode : {DcMode::kGradient, DcMode::kCgSolve}) {
    UnrolledOptions o;
    o.iterations = 5;
    o.dc_mode = mode;
    o.cg_iterations = 3;
    const UnrolledScheme scheme(o, mode == DcMode::kGradient ? fista_schedule(5, 0.9) : half_quadratic_schedule(5, 0.5),
                                step);
    L2Prior objective(a->domain_shape(), 0.01);
    expect_no_allocation_after_first_iteration(std::string("unrolled ") + std::string(to_string(mode)), 5,
                                               [&](ProgressSink* p) {
                                                 VecC x;
                                                 scheme.run(*a, y, x, p, &objective);
                                               });
  }
}

}  // namespace
}  // namespace recofold
