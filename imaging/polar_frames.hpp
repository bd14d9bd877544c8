// imaging/polar_frames.hpp — the polar frames of one view (PolarSequence::frames,
// timeheight.hpp), kept in memory or in a temporary file, read the same way.
//
// In memory (the default) it is a list of cv::Mat that share their pixels with what was
// added, as std::vector<cv::Mat> did. In a file (PolarFrames::in_file), each frame added
// is written at once (pwrite) to a temporary file made in a given folder and unlinked
// at once, so no file is left behind even when the process ends abruptly; a frame asked
// for is read back whole (pread) into a new cv::Mat. The file's pages are the kernel's
// page cache, not the process's resident memory (mmap is not used: its touched pages
// would count as resident), so a measurement's memory stays flat in frames (issue 18).
// The file closes when the last copy of the PolarFrames goes.
//
// Reading: operator[] returns the frame by value, const: a header sharing the pixels in
// memory, a fresh copy from the file. Frames are never changed in place (const stops an
// assignment to the returned value that would change nothing). Copies of a PolarFrames
// share the file; adding to one does not add to the others.
//
// A class, not a plain struct, because the two keepings must not be told apart by its
// readers (front finding, the pictures, the window read `frames[k]` either way).
// Threads: reading from several threads is safe (pread); adding is not.
// Errors: a file that cannot be made, written or read is an InputError naming the folder
// and the system's reason (e.g. a full disk).
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <iterator>
#include <memory>
#include <vector>

#include <opencv2/core.hpp>

namespace occulta::imaging {

class PolarFrames {
 public:
  PolarFrames() = default;  // in memory
  // Frames to come go to a temporary file in `folder` (made now; InputError when it cannot be).
  static PolarFrames in_file(const std::filesystem::path& folder);

  bool in_memory() const { return file_ == nullptr; }
  std::size_t size() const { return in_memory() ? memory_.size() : planes_.size(); }
  bool empty() const { return size() == 0; }

  // Adds a frame, a view into a larger image too: in memory its pixels are shared, not
  // copied (as std::vector<cv::Mat> would); in a file they are written now.
  void push_back(const cv::Mat& frame);

  const cv::Mat operator[](std::size_t k) const;
  const cv::Mat front() const { return (*this)[0]; }
  const cv::Mat back() const { return (*this)[size() - 1]; }

  // For range-for: each frame by value, oldest first.
  class iterator {
   public:
    using iterator_category = std::input_iterator_tag;
    using value_type = cv::Mat;
    using difference_type = std::ptrdiff_t;
    using pointer = void;
    using reference = const cv::Mat;
    iterator(const PolarFrames* frames, std::size_t k) : frames_(frames), k_(k) {}
    const cv::Mat operator*() const { return (*frames_)[k_]; }
    iterator& operator++() { return ++k_, *this; }
    bool operator==(const iterator& other) const { return k_ == other.k_; }
    bool operator!=(const iterator& other) const { return k_ != other.k_; }

   private:
    const PolarFrames* frames_;
    std::size_t k_;
  };
  iterator begin() const { return {this, 0}; }
  iterator end() const { return {this, size()}; }

 private:
  struct File;  // the open, unlinked temporary file
  struct Plane {
    std::uint64_t offset = 0;
    int rows = 0, cols = 0, type = 0;
  };
  std::vector<cv::Mat> memory_;
  std::shared_ptr<File> file_;
  std::vector<Plane> planes_;
};

}  // namespace occulta::imaging
