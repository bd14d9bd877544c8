// app/out_dir.hpp — the check every verb that writes makes of its --out folder before
// any work starts, so that a wrong folder costs the user nothing.
#pragma once

#include <filesystem>

namespace occulta::app {

// Throws imaging::InputError(dir, …) — one sentence, exit 1 like any unusable input —
// when `dir` is a file (or something else that is not a folder), lies under a file, or
// its nearest existing ancestor is not writable. Makes nothing: the verb makes the
// folder when it writes.
void check_out_dir(const std::filesystem::path& dir);

}  // namespace occulta::app
