// app/batch_event.cpp — one event of a catalogue run in a child process (contracts in
// batch_event.hpp).
#include "app/batch_event.hpp"

#include <fcntl.h>
#include <poll.h>
#include <signal.h>
#include <spawn.h>
#include <string.h>
#include <sys/prctl.h>
#include <sys/syscall.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <thread>

#include "fit/event.hpp"
#include "app/provenance.hpp"
#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"

extern char** environ;

namespace occulta::app {
namespace fs = std::filesystem;
using nlohmann::json;
using imaging::InputError;

namespace {

constexpr const char* kParentVariable = "OCCULTA_BATCH_PARENT";

std::string format_seconds(double s) {
  std::ostringstream text;
  text << s;
  return text.str();
}

// A JSON file of ours, or null when it is missing or unreadable (the caller decides).
json read_or_null(const fs::path& path) {
  std::error_code error;
  if (!fs::is_regular_file(path, error)) return nullptr;
  try {
    return fit::read_json_file(path);
  } catch (const std::exception&) {
    return nullptr;
  }
}

void remove_or_throw(const fs::path& path) {
  std::error_code error;
  fs::remove(path, error);
  if (error) throw InputError(path.string(), "cannot be removed (" + error.message() + "), so it could be taken for this run's");
}

// The "occulta: error: …" sentences the child printed (its log, at most its first 64 KB).
std::vector<std::string> error_sentences(const fs::path& log) {
  std::vector<std::string> sentences;
  std::ifstream in(log, std::ios::binary);
  std::string line;
  std::size_t read = 0;
  while (read < 65536 && std::getline(in, line)) {
    read += line.size() + 1;
    for (const char* prefix : {"occulta: error: ", "occulta: usage: "})
      if (line.starts_with(prefix)) sentences.push_back(line.substr(std::string_view(prefix).size()));
  }
  return sentences;
}

std::string signal_sentence(int signal) {
  const char* abbrev = sigabbrev_np(signal);
  std::string name = abbrev ? std::string("SIG") + abbrev : "number " + std::to_string(signal);
  if (signal == SIGKILL) return name + " (killed from outside: by someone, or by the system when memory ran out)";
  if (signal == SIGSEGV || signal == SIGBUS || signal == SIGABRT || signal == SIGFPE || signal == SIGILL)
    return name + " (a crash, in occulta or a library it uses)";
  return name;
}

}  // namespace

fs::path event_folder(const BatchSettings& settings, const std::string& id) { return settings.out_dir / id; }

fs::path event_file_for(const BatchSettings& settings, const CatalogueRow& row) {
  if (!row.event.empty()) return row.event;
  json views = json::array();
  for (const auto& [name, glob] : row.views) views.push_back({{"name", name}, {"files", json::array({glob})}});
  const json event = {{"schema", "occulta.event/1"},
                      {"id", row.id},
                      {"views", views},
                      {"window", {{"start", row.start}, {"end", row.end}}}};
  const std::string text = fit::json_text(event, 2) + "\n";
  const fs::path path = settings.out_dir / "events" / (row.id + ".event.json");
  std::error_code error;
  if (fs::is_regular_file(path, error)) {
    std::ifstream in(path, std::ios::binary);
    const std::string previous((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    if (previous == text) return path;  // untouched: concurrent shards never rewrite each other's
  }
  fs::create_directories(path.parent_path());
  imaging::write_file_atomically(path, text);
  return path;
}

json stamp_for(const BatchSettings& settings, const CatalogueRow& row) {
  json fields;
  if (!row.event.empty()) {
    fields = {{"event", row.event.string()}};
  } else {
    json views = json::array();
    for (const auto& [name, glob] : row.views) views.push_back({name, glob});
    fields = {{"start", row.start}, {"end", row.end}, {"views", views}};
  }
  // The frames the globs match now. An event file that is not a regular file (a FIFO, a
  // device) could block whoever reads it: it is left to the child, who has the time limit.
  json frames = nullptr;
  const fs::path event_file = event_file_for(settings, row);
  std::error_code error;
  if (fs::is_regular_file(event_file, error)) {
    try {
      frames = json::array();
      for (const fit::EventView& view : fit::read_event(event_file).views)
        for (const fs::path& f : view.files) frames.push_back(fs::absolute(f).lexically_normal().string());
    } catch (const InputError&) {
      frames = nullptr;  // the child says what is wrong with it
    }
  }
  return {{"row", fields},
          {"options", {{"median", settings.median}, {"apex_law", settings.apex_law},
                       {"checksum_warn_only", settings.checksum_warn_only}}},
          {"frames", frames}};
}

bool stamp_matches(const BatchSettings& settings, const CatalogueRow& row) {
  const json stamp = read_or_null(event_folder(settings, row.id) / "batch.json");
  return !stamp.is_null() && stamp == stamp_for(settings, row);
}

bool can_skip(const BatchSettings& settings, const CatalogueRow& row) {
  if (!stamp_matches(settings, row)) return false;
  const json result = read_or_null(event_folder(settings, row.id) / "result.json");
  if (!result.is_object() || result.value("schema", json()) != "occulta.result/1") return false;
  try {
    for (const json& input : result.at("provenance").at("inputs"))
      if (sha256_file(input.at("path").get<std::string>()) != input.at("sha256").get<std::string>()) return false;
  } catch (const std::exception&) {
    return false;  // an input gone or unreadable, or no provenance: measure it again
  }
  return true;
}

RunningEvent start_event(const BatchSettings& settings, const CatalogueRow& row) {
  const fs::path folder = event_folder(settings, row.id);
  std::error_code error;
  fs::create_directories(folder, error);
  if (error) throw InputError(folder.string(), "cannot be made (" + error.message() + ")");
  // The stamp first: a run killed from here on leaves no stamp, so the event runs again.
  for (const char* name : {"batch.json", "failure.json", "result.json"}) remove_or_throw(folder / name);
  const fs::path event_file = event_file_for(settings, row);

  const std::string median = std::to_string(settings.median);
  std::vector<std::string> args = {"occulta", "measure", event_file.string(), "--out", folder.string(), "--quiet",
                                   "--median", median, "--apex-law", settings.apex_law};
  if (settings.checksum_warn_only) args.emplace_back("--checksum-warn-only");
  std::vector<char*> argv;
  for (std::string& a : args) argv.push_back(a.data());
  argv.push_back(nullptr);
  std::vector<std::string> env_text;
  for (char** e = environ; *e; ++e)
    if (!std::string_view(*e).starts_with(std::string(kParentVariable) + "=")) env_text.emplace_back(*e);
  env_text.push_back(std::string(kParentVariable) + "=" + std::to_string(getpid()));
  std::vector<char*> envp;
  for (std::string& e : env_text) envp.push_back(e.data());
  envp.push_back(nullptr);

  const std::string log = (folder / "measure.log").string();
  posix_spawn_file_actions_t actions;
  posix_spawn_file_actions_init(&actions);
  posix_spawn_file_actions_addopen(&actions, 0, "/dev/null", O_RDONLY, 0);
  posix_spawn_file_actions_addopen(&actions, 1, "/dev/null", O_WRONLY, 0);
  posix_spawn_file_actions_addopen(&actions, 2, log.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  // Each child in a session of its own (glibc's POSIX_SPAWN_SETSID): Linux's scheduler
  // shares the cores between sessions first when autogroup is on (the default on desktop
  // and many server kernels, /proc/sys/kernel/sched_autogroup_enabled), so children left in
  // the coordinator's session would share one session's part of a busy machine however
  // many --jobs run. Ctrl-C reaches the coordinator, which stops them (batch.cpp), and
  // each dies with it (follow_batch_parent).
  posix_spawnattr_t attributes;
  posix_spawnattr_init(&attributes);
  posix_spawnattr_setflags(&attributes, POSIX_SPAWN_SETSID);
  RunningEvent running{row, -1, -1, std::chrono::steady_clock::now()};
  const int failed = posix_spawn(&running.pid, "/proc/self/exe", &actions, &attributes, argv.data(), envp.data());
  posix_spawnattr_destroy(&attributes);
  posix_spawn_file_actions_destroy(&actions);
  if (failed != 0)
    throw InputError(folder.string(), std::string("the measuring process could not be started (") + strerror(failed) + ")");
  running.pidfd = static_cast<int>(syscall(SYS_pidfd_open, running.pid, 0));
  const auto limit = std::chrono::duration<double>(settings.event_timeout_s);
  running.deadline += std::chrono::duration_cast<std::chrono::steady_clock::duration>(limit);
  return running;
}

std::optional<Ended> wait_for_one(std::vector<RunningEvent>& running, std::chrono::milliseconds at_most) {
  using clock = std::chrono::steady_clock;
  const auto until = clock::now() + at_most;
  for (;;) {
    const auto now = clock::now();
    for (std::size_t i = 0; i < running.size(); ++i) {
      int status = 0;
      if (waitpid(running[i].pid, &status, WNOHANG) == running[i].pid) return Ended{i, status, false};
      if (now >= running[i].deadline) {
        kill(running[i].pid, SIGKILL);
        waitpid(running[i].pid, &status, 0);
        return Ended{i, status, true};
      }
    }
    if (now >= until) return std::nullopt;
    auto next = until;
    for (const RunningEvent& r : running) next = std::min(next, r.deadline);
    const auto wait = std::chrono::ceil<std::chrono::milliseconds>(next - now);
    // A pidfd becomes readable when its process ends (Linux ≥ 5.3); without one, look again
    // every 20 ms.
    std::vector<pollfd> fds;
    for (const RunningEvent& r : running)
      if (r.pidfd >= 0) fds.push_back({r.pidfd, POLLIN, 0});
    if (!running.empty() && fds.size() == running.size()) {
      if (poll(fds.data(), fds.size(), static_cast<int>(wait.count())) < 0 && errno == EINTR) return std::nullopt;
    } else {
      std::this_thread::sleep_for(std::min(wait, std::chrono::milliseconds(20)));
    }
  }
}

std::string finish_event(const BatchSettings& settings, const RunningEvent& event, int wait_status, bool timed_out) {
  if (event.pidfd >= 0) close(event.pidfd);
  const fs::path folder = event_folder(settings, event.row.id);
  const json result = read_or_null(folder / "result.json");
  std::string status;
  if (result.is_object() && result.value("schema", json()) == "occulta.result/1") {
    // The seal is written last, so a result that is there is whole, however the child ended.
    status = result.value("status", std::string("failed"));
  } else {
    const std::string who = "measure of " + event_file_for(settings, event.row).string();
    std::vector<std::string> problems;
    if (timed_out) {
      problems.push_back(who + " ran longer than the event time limit of " + format_seconds(settings.event_timeout_s) +
                         " s (--event-timeout) and was stopped.");
    } else if (WIFSIGNALED(wait_status)) {
      problems.push_back(who + " was stopped by signal " + signal_sentence(WTERMSIG(wait_status)) + ".");
    } else {
      problems = error_sentences(folder / "measure.log");
      if (problems.empty())
        problems.push_back(who + " ended with exit code " + std::to_string(WEXITSTATUS(wait_status)) +
                           " and wrote no result.");
    }
    const json failure = {{"event_id", event.row.id}, {"status", "failed"}, {"problems", problems}};
    fit::write_json_file(folder / "failure.json", failure);
    status = "failed";
  }
  fit::write_json_file(folder / "batch.json", stamp_for(settings, event.row));
  return status;
}

void stop_all(std::vector<RunningEvent>& running) {
  for (RunningEvent& r : running) {
    int status = 0;
    kill(r.pid, SIGKILL);
    waitpid(r.pid, &status, 0);
    if (r.pidfd >= 0) close(r.pidfd);
  }
  running.clear();
}

void follow_batch_parent() {
  const char* parent = std::getenv(kParentVariable);
  if (!parent) return;
  // Linux prctl(2): SIGKILL when the parent ends. Set before the check, so that a parent
  // gone in between is seen by getppid().
  prctl(PR_SET_PDEATHSIG, SIGKILL);
  if (std::to_string(getppid()) != parent) std::_Exit(1);
}

}  // namespace occulta::app
