// imaging/output_file.cpp — whole-or-nothing files (contracts in output_file.hpp).
#include "imaging/output_file.hpp"

#include <atomic>
#include <cerrno>
#include <cstring>
#include <string>

#include <fcntl.h>
#include <unistd.h>

#include "imaging/input_error.hpp"

namespace occulta::imaging {

namespace {

std::string last_error() { return std::strerror(errno); }

// fsync(2) of a file or folder by name; false with errno set on failure.
bool sync_path(const std::filesystem::path& path, bool folder) {
  const int fd = ::open(path.c_str(), (folder ? O_RDONLY | O_DIRECTORY : O_WRONLY) | O_CLOEXEC);
  if (fd < 0) return false;
  const bool ok = ::fsync(fd) == 0;
  const int saved = errno;
  ::close(fd);
  errno = saved;
  return ok;
}

}  // namespace

std::filesystem::path pending_path(const std::filesystem::path& target) {
  static std::atomic<unsigned> counter{0};
  std::string name(1, '.');
  name.append(target.filename().string());
  name.append(".part-");
  name.append(std::to_string(::getpid()));
  name.push_back('-');
  name.append(std::to_string(counter++));
  return target.parent_path() / name;
}

bool is_pending_name(std::string_view name) {
  if (!name.starts_with('.')) return false;
  const std::size_t part = name.rfind(".part-");
  if (part == std::string_view::npos || part < 2) return false;
  std::string_view rest = name.substr(part + 6);  // "PID-N"
  const std::size_t dash = rest.find('-');
  auto digits = [](std::string_view s) {
    return !s.empty() && s.find_first_not_of("0123456789") == std::string_view::npos;
  };
  return dash != std::string_view::npos && digits(rest.substr(0, dash)) && digits(rest.substr(dash + 1));
}

void commit_pending(const std::filesystem::path& pending, const std::filesystem::path& target) {
  if (!sync_path(pending, false))
    throw InputError(target.string(), "it cannot be written: flushing it to the disk failed (" + last_error() + ")");
  std::error_code error;
  std::filesystem::rename(pending, target, error);
  if (error)
    throw InputError(target.string(), "it cannot be written: moving the finished file into place failed (" +
                                          error.message() + ")");
  const std::filesystem::path folder = target.parent_path().empty() ? std::filesystem::path(".") : target.parent_path();
  // The rename is done; a folder that cannot be synced (some file systems refuse) is no
  // reason to report the file as unwritten.
  sync_path(folder, true);
}

void write_file_atomically(const std::filesystem::path& path, std::string_view bytes) {
  const std::filesystem::path pending = pending_path(path);
  const int fd = ::open(pending.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0666);
  if (fd < 0) throw InputError(path.string(), "it cannot be written (" + last_error() + ")");
  bool ok = true;
  for (std::size_t at = 0; ok && at < bytes.size();) {
    const ssize_t wrote = ::write(fd, bytes.data() + at, bytes.size() - at);
    if (wrote < 0 && errno == EINTR) continue;
    ok = wrote > 0;
    if (ok) at += static_cast<std::size_t>(wrote);
  }
  const std::string error = ok ? std::string() : last_error();
  ::close(fd);
  try {
    if (!ok) throw InputError(path.string(), "it could not be written in full (" + error + ")");
    commit_pending(pending, path);
  } catch (...) {
    std::error_code ignored;
    std::filesystem::remove(pending, ignored);
    throw;
  }
}

void remove_stale_temporaries(const std::filesystem::path& folder) {
  std::error_code error;
  std::filesystem::directory_iterator it(folder, error), end;
  for (; !error && it != end; it.increment(error)) {
    std::error_code ignored;
    if (is_pending_name(it->path().filename().string()) && it->is_regular_file(ignored))
      std::filesystem::remove(it->path(), ignored);
  }
}

}  // namespace occulta::imaging
