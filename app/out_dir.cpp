#include "app/out_dir.hpp"

#include <unistd.h>

#include "imaging/input_error.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

void check_out_dir(const fs::path& dir) {
  const std::string name = dir.string();
  if (name.empty()) throw imaging::InputError("--out", "is empty; give the folder to write into");
  std::error_code error;
  // The folder itself when it exists, else its nearest existing ancestor (made later).
  fs::path existing = fs::absolute(dir, error).lexically_normal();
  while (!existing.empty() && !fs::exists(existing, error)) {
    if (existing == existing.parent_path()) break;
    existing = existing.parent_path();
  }
  const bool is_self = fs::exists(dir, error);
  if (fs::exists(existing, error) && !fs::is_directory(existing, error))
    throw imaging::InputError(name, is_self ? "is a file, but --out needs a folder to write into"
                                            : "cannot be made: " + existing.string() + " is a file, not a folder");
  // access(2) with W_OK|X_OK: may we add entries to that folder (POSIX)?
  if (access(existing.c_str(), W_OK | X_OK) != 0)
    throw imaging::InputError(name, is_self ? "is a folder we may not write into"
                                            : "cannot be made: " + existing.string() + " is a folder we may not write into");
}

}  // namespace occulta::app
