// app/batch_run.cpp — shares, plans, progress and the closing of a catalogue run
// (contracts in batch_run.hpp).
#include "app/batch_run.hpp"

#include <sys/resource.h>
#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <ostream>
#include <thread>

#include "app/batch_table.hpp"
#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

Shard parse_shard(const std::string& text) {
  if (text.empty()) return {};
  unsigned long k = 0, n = 0;
  char tail = 0;
  if (std::sscanf(text.c_str(), "%lu/%lu%c", &k, &n, &tail) != 2 || n == 0 || k == 0 || k > n ||
      text.find_first_not_of("0123456789/") != std::string::npos)
    throw imaging::InputError("--shard", "is \"" + text + "\"; it needs K/N with 1 ≤ K ≤ N, e.g. 2/8");
  return {k - 1, n};
}

BatchSettings settings_from(const BatchOptions& o) {
  BatchSettings s;
  s.out_dir = fs::absolute(o.out_dir).lexically_normal();
  s.median = o.median;
  s.apex_law = o.apex_law;
  s.checksum_warn_only = o.checksum_warn_only;
  s.event_timeout_s = o.event_timeout_s;
  return s;
}

Plan plan_for(const CatalogueRow& row, const Shard& shard, const BatchSettings& settings, bool resume) {
  if (row.index % shard.n != shard.k) return Plan::other_shard;
  if (!row.fault.empty()) return Plan::fault;
  if (resume && can_skip(settings, row)) return Plan::kept;
  return Plan::measure;
}

std::string kept_status(const BatchSettings& settings, const CatalogueRow& row) {
  try {
    return fit::read_json_file(event_folder(settings, row.id) / "result.json").value("status", std::string("failed"));
  } catch (const std::exception&) {
    return "failed";
  }
}

std::size_t rows_in_share(const std::string& catalogue, const Shard& shard) {
  CatalogueReader reader(catalogue, result_column_names());
  std::size_t n = 0;
  while (const auto row = reader.next()) n += row->index % shard.n == shard.k;
  return n;
}

Progress::Progress(std::size_t total, bool quiet, std::ostream& out)
    : total_(total), quiet_(quiet), terminal_(isatty(STDOUT_FILENO) == 1), out_(out) {}

void Progress::count(const std::string& id, const std::string& status, const char* note) {
  const bool measured = note == nullptr;
  ++done_;
  (status == "ok" ? ok_ : not_ok_)++;
  measured_ += measured;
  if (quiet_) return;
  const double minutes = std::chrono::duration<double>(std::chrono::steady_clock::now() - started_).count() / 60.0;
  const double per_minute = minutes > 0 ? static_cast<double>(done_) / minutes : 0.0;
  char line[200];
  if (terminal_) {
    // One line redrawn in place: done/total, ok/not ok, events per minute and the time left.
    const double left_s = per_minute > 0 ? 60.0 * static_cast<double>(total_ - done_) / per_minute : 0.0;
    std::snprintf(line, sizeof line, "\r%zu/%zu done, %zu ok, %zu not ok, %.1f events/min, %02d:%02d:%02d left ",
                  done_, total_, ok_, not_ok_, per_minute, static_cast<int>(left_s / 3600),
                  static_cast<int>(left_s / 60) % 60, static_cast<int>(left_s) % 60);
    out_ << line << std::flush;
  } else {
    std::snprintf(line, sizeof line, "[%zu/%zu] ", done_, total_);
    out_ << line << id << ' ' << status << (measured ? "" : std::string(" (") + note + ")") << '\n' << std::flush;
  }
}

void Progress::not_started(const std::string& id, const std::string& sentence) {
  not_started_[id] = sentence;
  count(id, "failed", "could not start");
}

void Progress::finish() {
  if (!quiet_ && terminal_ && done_ > 0) out_ << '\n';
}

int close_run(const BatchOptions& options, const BatchSettings& settings, const Progress& progress, bool interrupted,
              std::ostream& out) {
  const TableCounts counts = write_tables(settings, options.catalogue, progress.start_failures());
  if (!options.quiet) {
    out << (interrupted ? "interrupted; " : "") << counts.rows << " rows: " << counts.ok << " ok, " << counts.partial
        << " partial, " << counts.failed << " failed";
    if (counts.not_run) out << ", " << counts.not_run << " not run";
    // What the run cost: wall time, and this process's own peak memory (getrusage(2)
    // RUSAGE_SELF: the coordinator alone, not its children) — flat in the number of rows.
    rusage self{};
    getrusage(RUSAGE_SELF, &self);
    char cost[160];
    std::snprintf(cost, sizeof cost, " in %.1f s; coordinator peak memory %ld KB", progress.elapsed_s(), self.ru_maxrss);
    out << "; " << progress.measured() << " events measured in this run" << cost << "\n"
        << "written: " << (settings.out_dir / "results.csv").string() << ", results.fits\n";
  }
  return !interrupted && progress.all_ok() ? 0 : 1;
}

}  // namespace occulta::app
