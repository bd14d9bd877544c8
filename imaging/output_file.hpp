// imaging/output_file.hpp — files that appear whole or not at all.
//
// Every output is written under a hidden temporary name beside its target
// (".NAME.part-PID-N"), flushed to the disk with fsync(2), renamed over the target
// (rename(2) is atomic within a file system, POSIX.1-2017), and the folder is fsynced so
// the new name itself survives a crash. A run killed at any moment leaves the target as
// it was or whole, never truncated; at worst a temporary, which the next run that owns
// the folder removes (remove_stale_temporaries).
#pragma once

#include <filesystem>
#include <string_view>

namespace occulta::imaging {

// The hidden temporary beside `target`, unique per process and call.
std::filesystem::path pending_path(const std::filesystem::path& target);

// Whether `name` is a file name pending_path() makes (".X.part-PID-N").
bool is_pending_name(std::string_view name);

// fsync `pending`, rename it to `target`, fsync the folder. InputError(target, …).
void commit_pending(const std::filesystem::path& pending, const std::filesystem::path& target);

// Writes `bytes` to `path` whole or not at all. InputError(path, …) on failure.
void write_file_atomically(const std::filesystem::path& path, std::string_view bytes);

// Removes the temporaries pending_path() made in `folder` (not below it) that a killed
// run left behind. Only names of that form are touched.
void remove_stale_temporaries(const std::filesystem::path& folder);

}  // namespace occulta::imaging
