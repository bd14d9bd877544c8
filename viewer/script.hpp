// viewer/script.hpp — the window driven by a file: a JSON list of actions, each an object
// {"do": NAME, …arguments} (the forms are listed in viewer/actions.hpp and the README).
// `occulta view --script` applies them in order before the snapshot; the tests drive the
// window's real code path with them.
//
// Errors: one imaging::InputError naming the file and the fault — "action 3 (display):
// mode "fancy" is not one of calibrated, running_difference, …". Unknown arguments are
// faults too (a misspelt argument must not pass silently).
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "viewer/actions.hpp"

namespace occulta::viewer {

// The actions of a parsed script; `source` names it in errors.
std::vector<Action> parse_script(const nlohmann::json& script, const std::string& source);

// Reads and parses a script file.
std::vector<Action> read_script(const std::filesystem::path& path);

}  // namespace occulta::viewer
