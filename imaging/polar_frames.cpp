// imaging/polar_frames.cpp — polar frames in memory or in an unlinked temporary file
// (polar_frames.hpp).
#include "imaging/polar_frames.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <string>

#include "imaging/input_error.hpp"

namespace occulta::imaging {

struct PolarFrames::File {
  int fd = -1;
  std::filesystem::path folder;  // where it was made, for the sentences
  std::uint64_t end = 0;         // bytes written so far: where the next frame goes

  ~File() {
    if (fd >= 0) ::close(fd);
  }
  [[noreturn]] void fail(const char* doing, int error) const {
    throw InputError(folder.string(), std::string("cannot ") + doing +
                                          " the temporary file of the polar running differences: " +
                                          std::strerror(error));
  }
};

PolarFrames PolarFrames::in_file(const std::filesystem::path& folder) {
  auto file = std::make_shared<File>();
  file->folder = folder;
  std::string name = (folder / ".occulta-polar-XXXXXX").string();
  file->fd = ::mkstemp(name.data());
  if (file->fd < 0) file->fail("make", errno);
  // Unlinked at once: the open descriptor keeps it until the last copy closes it, and
  // nothing is left in `folder` however the process ends.
  if (::unlink(name.c_str()) != 0) file->fail("unlink", errno);
  PolarFrames frames;
  frames.file_ = std::move(file);
  return frames;
}

void PolarFrames::push_back(const cv::Mat& frame) {
  if (in_memory()) {
    memory_.push_back(frame);
    return;
  }
  const cv::Mat whole = frame.isContinuous() ? frame : frame.clone();
  const char* bytes = reinterpret_cast<const char*>(whole.data);
  const std::size_t size = whole.total() * whole.elemSize();
  const Plane plane{file_->end, whole.rows, whole.cols, whole.type()};
  for (std::size_t done = 0; done < size;) {
    const ssize_t n = ::pwrite(file_->fd, bytes + done, size - done, off_t(plane.offset + done));
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) file_->fail("write", n < 0 ? errno : ENOSPC);
    done += std::size_t(n);
  }
  file_->end += size;
  planes_.push_back(plane);
}

const cv::Mat PolarFrames::operator[](std::size_t k) const {
  if (in_memory()) return memory_[k];
  const Plane& plane = planes_[k];
  cv::Mat frame(plane.rows, plane.cols, plane.type);
  char* bytes = reinterpret_cast<char*>(frame.data);
  const std::size_t size = frame.total() * frame.elemSize();
  for (std::size_t done = 0; done < size;) {
    const ssize_t n = ::pread(file_->fd, bytes + done, size - done, off_t(plane.offset + done));
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) file_->fail("read", n < 0 ? errno : EIO);
    done += std::size_t(n);
  }
  return frame;
}

}  // namespace occulta::imaging
