// app/batch_run.hpp — what the catalogue run's two engines share (the local pool in
// batch.cpp and MPI in batch_mpi.cpp): which rows are this run's, what to do with each,
// the progress display and the closing summary.
#pragma once

#include <chrono>
#include <iosfwd>
#include <optional>
#include <string>

#include "app/batch.hpp"
#include "app/batch_event.hpp"
#include "app/batch_table.hpp"
#include "app/catalogue.hpp"

namespace occulta::app {

// --shard K/N: 0-based k and n (all rows: 0 and 1). InputError("--shard", …) when malformed.
struct Shard {
  std::size_t k = 0, n = 1;
};
Shard parse_shard(const std::string& text);

BatchSettings settings_from(const BatchOptions& options);

// What a run does with one row: not this shard's; a row that cannot run (its fault); an
// event kept from before (--resume, with its status); or an event to measure.
enum class Plan { other_shard, fault, kept, measure };
Plan plan_for(const CatalogueRow& row, const Shard& shard, const BatchSettings& settings, bool resume);
// The status of a kept event, from its result.json.
std::string kept_status(const BatchSettings& settings, const CatalogueRow& row);

class Progress {  // counts and the display; owns numbers and the sentences of events that could not start
 public:
  Progress(std::size_t total, bool quiet, std::ostream& out);
  // An event done: measured in this run, or not (`note` says why: kept, a row fault).
  void count(const std::string& id, const std::string& status, const char* note = nullptr);
  // An event whose child could not be started: failed, with the sentence for its row.
  void not_started(const std::string& id, const std::string& sentence);
  void finish();
  bool all_ok() const { return not_ok_ == 0; }
  std::size_t measured() const { return measured_; }
  const StartFailures& start_failures() const { return not_started_; }
  double elapsed_s() const {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - started_).count();
  }

 private:
  std::size_t total_, done_ = 0, ok_ = 0, not_ok_ = 0, measured_ = 0;
  bool quiet_, terminal_;
  std::ostream& out_;
  StartFailures not_started_;  // only the events that could not start: stays small
  std::chrono::steady_clock::time_point started_ = std::chrono::steady_clock::now();
};

// The rows of this run's share, counted by streaming the catalogue once (header faults
// are InputErrors before any work).
std::size_t rows_in_share(const std::string& catalogue, const Shard& shard);

// The tables, then one summary line; returns the exit code (0 all of the share ok).
int close_run(const BatchOptions& options, const BatchSettings& settings, const Progress& progress, bool interrupted,
              std::ostream& out);

#ifdef OCCULTA_HAVE_MPI
int batch_mpi(const BatchOptions& options, std::ostream& out, std::ostream& err);
#endif

}  // namespace occulta::app
