// imaging/avx512.hpp — kernels built for AVX-512 beside the baseline build: the CPU check
// that chooses them, and the pragmas that build a stretch of a file for that target
// (median5.cpp, bilinear.cpp).
//
// A whole stretch, not one function: GCC lowers a vector operation in the function it is
// written in, before inlining, so a helper built for the baseline comes out lane by lane
// inside an AVX-512 function (median5.cpp measured it: 3.1 ms a frame against 1.8).
#pragma once

// Every function between the two is built for AVX-512 F, DQ, BW and VL (x86-64-v4's).
#if defined(__clang__)
#define OCCULTA_AVX512_BEGIN \
  _Pragma("clang attribute push(__attribute__((target(\"avx512f,avx512dq,avx512bw,avx512vl\"))), apply_to = function)")
#define OCCULTA_AVX512_END _Pragma("clang attribute pop")
#else
#define OCCULTA_AVX512_BEGIN _Pragma("GCC push_options") _Pragma("GCC target(\"avx512f,avx512dq,avx512bw,avx512vl\")")
#define OCCULTA_AVX512_END _Pragma("GCC pop_options")
#endif

namespace occulta::imaging {

// Whether this CPU runs what is built between OCCULTA_AVX512_BEGIN and _END.
inline bool has_avx512() {
  static const bool avx512 = __builtin_cpu_supports("avx512f") && __builtin_cpu_supports("avx512dq") &&
                             __builtin_cpu_supports("avx512bw") && __builtin_cpu_supports("avx512vl");
  return avx512;
}

}  // namespace occulta::imaging
