// tests/fuzz/fuzz_file.hpp — for targets whose reader takes a path: the fuzz input as a
// file under a fixed name in a scratch folder (rewritten for every input, removed at
// exit). The folder is under TMPDIR, or OCCULTA_FUZZ_SCRATCH in the suite: both on
// /dev/shm where it exists, since on ext4 every rewrite is flushed to disk.
#pragma once

#include <cstddef>
#include <cstdlib>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <string>

#include <unistd.h>

namespace occulta::fuzz {

inline std::filesystem::path fuzz_file(const std::uint8_t* data, std::size_t size, const std::string& name) {
  // OCCULTA_FUZZ_SCRATCH names the folder when the path must not vary between runs: the
  // suite's two seeded passes must find the same inputs, and libFuzzer takes the bytes
  // of every string comparison (the path's included) into its mutations, so a folder
  // named by the process id made the passes differ. Otherwise: one folder per process.
  static const std::filesystem::path folder = [] {
    const char* fixed = std::getenv("OCCULTA_FUZZ_SCRATCH");
    const std::filesystem::path dir =
        fixed && *fixed ? std::filesystem::path(fixed)
                        : std::filesystem::temp_directory_path() / ("occulta-fuzz-" + std::to_string(::getpid()));
    std::filesystem::create_directories(dir);
    static const std::filesystem::path removed_at_exit = dir;
    std::atexit([] {
      std::error_code ignored;
      std::filesystem::remove_all(removed_at_exit, ignored);
    });
    return dir;
  }();
  const std::filesystem::path path = folder / name;
  std::ofstream(path, std::ios::binary | std::ios::trunc).write(reinterpret_cast<const char*>(data),
                                                                 static_cast<std::streamsize>(size));
  return path;
}

}  // namespace occulta::fuzz
