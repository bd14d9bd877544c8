// imaging/frame_memory.cpp — large heap blocks kept for reuse, large matrices in huge pages.
#include "imaging/frame_memory.hpp"

#include <malloc.h>
#include <sys/mman.h>

#include <cstdint>
#include <mutex>
#include <new>
#include <vector>

#include <opencv2/core.hpp>

namespace occulta::imaging {
namespace {

// Frames' buffers in 2 MiB pages. The chain's large buffers (raw frames of 4 MB, the
// median's scratch, the Cartesian frames) are first touched one 4 KiB page at a time,
// each page a fault into the kernel: ~16 000 per run of 30 1024² frames, about a tenth of
// the process's CPU time on this virtual machine. Linux backs an allocation with
// transparent huge pages when asked (madvise(2) MADV_HUGEPAGE; this system's THP mode is
// "madvise"), one fault per 2 MiB. cv::Mat takes its memory from the default
// MatAllocator; this one gives matrices of 2 MiB or more a mapping of their own, aligned
// to 2 MiB and so advised, and the rest what OpenCV's own allocator gives
// (cv::fastMalloc). It only places memory: every value is the same. Measured on those
// 30 frames: page faults 15.9 k → 9.1 k, CPU time −8 % (medians of 7 alternating runs),
// peak resident memory unchanged (82 MB). Memory aligned inside the heap instead
// (aligned_alloc) raised the peak to 140 MB: a huge page is backed whole as soon as
// the heap writes a chunk header into it. A class because it is OpenCV's interface.
class HugePageAllocator final : public cv::MatAllocator {
 public:
  static constexpr std::size_t kHuge = std::size_t{2} << 20;
  static constexpr int kHugeFlag = 1;  // in UMatData::allocatorFlags_: a mapping of its own

  cv::UMatData* allocate(int dims, const int* sizes, int type, void* data0, std::size_t* step, cv::AccessFlag,
                         cv::UMatUsageFlags) const override {
    // The layout OpenCV's own allocator gives (continuous rows unless steps are given).
    std::size_t total = CV_ELEM_SIZE(type);
    for (int i = dims - 1; i >= 0; --i) {
      if (step) {
        if (data0 && step[i] != cv::Mat::AUTO_STEP) {
          CV_Assert(total <= step[i]);
          total = step[i];
        } else {
          step[i] = total;
        }
      }
      total *= std::size_t(sizes[i]);
    }
    auto* u = new cv::UMatData(this);
    u->size = total;
    if (data0) {
      u->data = u->origdata = static_cast<uchar*>(data0);
      u->flags |= cv::UMatData::USER_ALLOCATED;
    } else if (total >= kHuge) {
      // A mapping of its own, 2 MiB-aligned (one extra 2 MiB mapped, the ends unmapped),
      // so that its huge pages hold this matrix alone and go back whole when it is freed.
      const std::size_t rounded = (total + kHuge - 1) / kHuge * kHuge;
      if (void* kept = take_kept(rounded)) {
        u->data = u->origdata = static_cast<uchar*>(kept);
        u->allocatorFlags_ = kHugeFlag;
        return u;
      }
      void* mapped = mmap(nullptr, rounded + kHuge, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
      if (mapped == MAP_FAILED) throw std::bad_alloc();
      const auto start = reinterpret_cast<std::uintptr_t>(mapped);
      const std::uintptr_t aligned = (start + kHuge - 1) / kHuge * kHuge;
      if (aligned > start) munmap(mapped, aligned - start);
      if (const std::uintptr_t end = start + rounded + kHuge; end > aligned + rounded)
        munmap(reinterpret_cast<void*>(aligned + rounded), end - (aligned + rounded));
      madvise(reinterpret_cast<void*>(aligned), rounded, MADV_HUGEPAGE);  // advice: without THP pages stay small
      u->data = u->origdata = reinterpret_cast<uchar*>(aligned);
      u->allocatorFlags_ = kHugeFlag;
    } else {
      u->data = u->origdata = static_cast<uchar*>(cv::fastMalloc(total));
    }
    return u;
  }
  bool allocate(cv::UMatData* u, cv::AccessFlag, cv::UMatUsageFlags) const override { return u != nullptr; }
  // Freed mappings are kept, up to kKeptLimit bytes, for the next matrix of the same
  // rounded size: its pages are already backed, so it takes no fault (a 2 MiB page
  // faulted in costs this virtual machine about 3 ms). Their contents are stale, as
  // cv::fastMalloc's are.
  static constexpr std::size_t kKeptLimit = std::size_t{32} << 20;
  struct Kept {
    void* address;
    std::size_t size;
  };
  mutable std::mutex kept_mutex_;
  mutable std::vector<Kept> kept_;
  mutable std::size_t kept_bytes_ = 0;

  void* take_kept(std::size_t size) const {
    const std::lock_guard lock(kept_mutex_);
    for (std::size_t i = 0; i < kept_.size(); ++i)
      if (kept_[i].size == size) {
        void* address = kept_[i].address;
        kept_bytes_ -= size;
        kept_.erase(kept_.begin() + std::ptrdiff_t(i));
        return address;
      }
    return nullptr;
  }
  void keep_or_unmap(void* address, std::size_t size) const {
    {
      const std::lock_guard lock(kept_mutex_);
      if (kept_bytes_ + size <= kKeptLimit) {
        kept_.push_back({address, size});
        kept_bytes_ += size;
        return;
      }
    }
    munmap(address, size);
  }

  void deallocate(cv::UMatData* u) const override {
    if (!u) return;
    CV_Assert(u->urefcount == 0 && u->refcount == 0);
    if (!(u->flags & cv::UMatData::USER_ALLOCATED)) {
      if (u->allocatorFlags_ == kHugeFlag)
        keep_or_unmap(u->origdata, (u->size + kHuge - 1) / kHuge * kHuge);
      else
        cv::fastFree(u->origdata);
    }
    delete u;
  }
};

}  // namespace

void set_frame_memory() {
  static std::once_flag once;
  std::call_once(once, [] {
    // By default glibc hands blocks of 128 KiB and more straight back to the system and
    // takes fresh zeroed pages for the next, each page faulted in anew (costly on a
    // virtual machine); kept in the heap instead (glibc mallopt(3)), they are reused.
    // Peak memory stays the same: what is kept is what the next frame needs.
    mallopt(M_MMAP_THRESHOLD, 64 << 20);
    mallopt(M_TRIM_THRESHOLD, 256 << 20);
    // One heap for every thread: a block one thread frees is there for the next thread's
    // (the read-ahead threads, OpenCV's workers and the pictures' threads each had an arena
    // of their own, each faulted in anew). A maps run of 30 frames: page faults 9.2 k →
    // 6.3 k, CPU −7 % (paired runs); the threads allocate a few large blocks a frame, so
    // the one arena's lock is not contended.
    mallopt(M_ARENA_MAX, 1);
    // Made once and never destroyed: matrices it allocated may be freed as late as the
    // process's exit.
    if (!kAddressSanitized) cv::Mat::setDefaultAllocator(new HugePageAllocator);
  });
}

}  // namespace occulta::imaging
