// tests/fuzz/fuzz_file.hpp — for targets whose reader takes a path: the fuzz input as a
// file under a fixed name in a per-process scratch folder (rewritten for every input,
// removed at exit). The folder is under TMPDIR: the campaign and the suite point that at
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
  static const std::filesystem::path folder = [] {
    const std::filesystem::path dir =
        std::filesystem::temp_directory_path() / ("occulta-fuzz-" + std::to_string(::getpid()));
    std::filesystem::create_directories(dir);
    std::atexit([] {
      std::error_code ignored;
      std::filesystem::remove_all(
          std::filesystem::temp_directory_path(ignored) / ("occulta-fuzz-" + std::to_string(::getpid())), ignored);
    });
    return dir;
  }();
  const std::filesystem::path path = folder / name;
  std::ofstream(path, std::ios::binary | std::ios::trunc).write(reinterpret_cast<const char*>(data),
                                                                 static_cast<std::streamsize>(size));
  return path;
}

}  // namespace occulta::fuzz
