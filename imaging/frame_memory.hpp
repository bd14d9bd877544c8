// imaging/frame_memory.hpp — where the imaging chain's frame buffers live.
//
// The chain frees and makes again buffers of megabytes frame after frame (raw frames of
// 4 MB, the median's scratch, remap tables, Cartesian frames), on several threads. How
// the process places them decides how many page faults it takes; it never changes a
// value. `maps` and `measure` set it once, before their first frame.
#pragma once

namespace occulta::imaging {

// True in a build under AddressSanitizer. GCC defines __SANITIZE_ADDRESS__; clang answers
// __has_feature(address_sanitizer).
#if defined(__SANITIZE_ADDRESS__)
inline constexpr bool kAddressSanitized = true;
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
inline constexpr bool kAddressSanitized = true;
#else
inline constexpr bool kAddressSanitized = false;
#endif
#else
inline constexpr bool kAddressSanitized = false;
#endif

// For the rest of the process: large heap blocks are kept for reuse instead of handed
// back to the system, every thread allocates from one heap (glibc mallopt(3)), and
// OpenCV matrices of 2 MiB or more go in transparent huge pages, freed ones kept for the
// next of the same size (frame_memory.cpp says why and what was measured). Call it
// before the process starts its threads. The huge
// pages are left out under AddressSanitizer: a matrix in a mapping of its own has no
// redzones, and the sanitized tests would not see a read past its end. Safe to call
// more than once and from several threads.
void set_frame_memory();

}  // namespace occulta::imaging
