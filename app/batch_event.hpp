// app/batch_event.hpp — one event of a catalogue run, measured in a child process.
//
// The child is this very program's `measure` verb (posix_spawn of /proc/self/exe), with
// the run's options and `--out DIR/<id>`, so every event goes through exactly the code
// of `occulta measure` and writes its outputs as measure does: the previous result.json
// removed first, this run's written last (app/output_set.hpp). The child's stderr goes to
// DIR/<id>/measure.log. It dies with its parent (Linux PR_SET_PDEATHSIG): a coordinator
// killed with SIGKILL leaves no event running on.
//
// Per event folder DIR/<id>/, besides measure's own outputs:
//   batch.json     the stamp: what the event was measured from — the catalogue row's
//                  fields, the options that shape a result (not the time limit), the
//                  frames its globs matched — written after the
//                  child ends. A resumed run skips an event whose stamp matches and whose
//                  result.json's inputs still have their SHA-256 (provenance).
//   failure.json   {event_id, status "failed", problems[]} when the child wrote no result:
//                  it crashed, timed out, was killed, or stopped on an error.
// A row of the window form (id,start,end,views) becomes the event file
// DIR/events/<id>.event.json (globs absolute), outside every event's folder.
#pragma once

#include <chrono>
#include <filesystem>
#include <optional>
#include <string>
#include <sys/types.h>

#include <nlohmann/json.hpp>

#include "app/catalogue.hpp"

namespace occulta::app {

struct BatchSettings {
  std::filesystem::path out_dir;      // absolute
  int median = 5;                     // measure --median
  std::string apex_law = "auto";      // measure --apex-law
  bool checksum_warn_only = false;    // measure --checksum-warn-only
  double event_timeout_s = 1800.0;    // a child running longer is stopped (SIGKILL)
};

// The event's folder, DIR/<id>.
std::filesystem::path event_folder(const BatchSettings& settings, const std::string& id);

// The event file the child measures: the row's own, or DIR/events/<id>.event.json,
// written (whole or not at all) when its content changes.
std::filesystem::path event_file_for(const BatchSettings& settings, const CatalogueRow& row);

// What the stamp holds for this row now (the frames matched read from the event file;
// none when the event file cannot be read: the child reports that).
nlohmann::json stamp_for(const BatchSettings& settings, const CatalogueRow& row);

// The stamp in the event's folder equals stamp_for(…) now.
bool stamp_matches(const BatchSettings& settings, const CatalogueRow& row);

// --resume: the stamp matches, result.json is there, and every input it names still has
// the SHA-256 recorded in its provenance.
bool can_skip(const BatchSettings& settings, const CatalogueRow& row);

// A child measuring one event.
struct RunningEvent {
  CatalogueRow row;
  pid_t pid = -1;
  int pidfd = -1;  // Linux pidfd (poll(2) tells when the child ends); -1 where unsupported
  std::chrono::steady_clock::time_point deadline;
};

// Clears the previous stamp, failure and result of the event, then spawns the child.
// InputError(DIR/<id>, …) when the folder cannot be made or the child cannot be started.
RunningEvent start_event(const BatchSettings& settings, const CatalogueRow& row);

// Waits until one of `running` ends or passes its deadline (then kills it with SIGKILL
// and reaps it), for at most `at_most`; returns its position with its wait status and
// whether it timed out, or nullopt when none did in that time.
struct Ended {
  std::size_t at;
  int wait_status;
  bool timed_out;
};
std::optional<Ended> wait_for_one(std::vector<RunningEvent>& running, std::chrono::milliseconds at_most);

// After the child ended: failure.json when it wrote no result, then the stamp. Returns the
// event's status: "ok", "partial" or "failed".
std::string finish_event(const BatchSettings& settings, const RunningEvent& event, int wait_status, bool timed_out);

// Kills (SIGKILL) and reaps every child still running (an interrupted run).
void stop_all(std::vector<RunningEvent>& running);

// Called first thing in main(): in a child of a catalogue run (OCCULTA_BATCH_PARENT set),
// die with the parent; exit at once if the parent is already gone.
void follow_batch_parent();

}  // namespace occulta::app
