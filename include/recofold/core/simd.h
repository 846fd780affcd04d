// SPDX-License-Identifier: Apache-2.0
// Function multi-versioning for hot loops: one build runs AVX2/AVX-512 code where the CPU has it.
#pragma once

// RECOFOLD_SIMD_CLONES on a (non-template) function compiles it for the
// baseline x86-64 instruction set and for x86-64-v3 (AVX2) and x86-64-v4
// (AVX-512); the dynamic loader picks the best version for the running CPU
// (GCC target_clones). Floating-point contraction is off for all of recofold
// (-ffp-contract=off, cmake/RecofoldHelpers.cmake), so every version rounds
// each operation the same way and results do not depend on the machine
// (except the order of explicit `omp simd` reductions, which follows the
// vector width).
//
// RECOFOLD_KERNEL marks the small helpers such a function calls: they are
// inlined into each version, so they are compiled for its instruction set too.
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && defined(__linux__)
#define RECOFOLD_SIMD_CLONES __attribute__((target_clones("arch=x86-64-v4", "arch=x86-64-v3", "default")))
#else
#define RECOFOLD_SIMD_CLONES
#endif

#if defined(__GNUC__)
#define RECOFOLD_KERNEL inline __attribute__((always_inline))
#else
#define RECOFOLD_KERNEL inline
#endif
