// app/batch.cpp — `occulta batch` on one machine: a pool of at most --jobs children
// (contracts in batch.hpp).
#include "app/batch.hpp"

#include <signal.h>

#include <csignal>
#include <filesystem>
#include <ostream>
#include <thread>

#include "app/batch_run.hpp"
#include "app/batch_table.hpp"
#include "imaging/input_error.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

namespace {

volatile std::sig_atomic_t g_interrupted = 0;
void on_interrupt(int) { g_interrupted = 1; }

// SIGINT and SIGTERM end the run early but cleanly: no new event starts, the running ones
// are stopped, the tables are written. No SA_RESTART, so a wait returns to look.
void catch_interrupts() {
  struct sigaction action {};
  action.sa_handler = on_interrupt;
  sigemptyset(&action.sa_mask);
  sigaction(SIGINT, &action, nullptr);
  sigaction(SIGTERM, &action, nullptr);
}

}  // namespace

int batch(const BatchOptions& o, std::ostream& out, std::ostream& err) {
  const Shard shard = parse_shard(o.shard);
  if (o.jobs < 0) throw imaging::InputError("--jobs", "is " + std::to_string(o.jobs) + "; it needs 1 or more");
  if (!(o.event_timeout_s > 0)) throw imaging::InputError("--event-timeout", "needs a number of seconds above 0");
#ifdef OCCULTA_HAVE_MPI
  if (o.mpi) return batch_mpi(o, out, err);
#else
  if (o.mpi) throw imaging::InputError("--mpi", "this occulta was built without OpenMPI (libopenmpi-dev); run ./bootstrap build");
#endif
  (void)err;
  const BatchSettings settings = settings_from(o);
  const std::size_t total = rows_in_share(o.catalogue, shard);  // header faults before any work
  fs::create_directories(settings.out_dir);
  const std::size_t jobs = o.jobs > 0 ? static_cast<std::size_t>(o.jobs)
                                      : std::max<std::size_t>(1, std::thread::hardware_concurrency());
  catch_interrupts();
  Progress progress(total, o.quiet, out);
  std::vector<RunningEvent> running;
  const auto collect = [&](std::chrono::milliseconds at_most) {
    if (const std::optional<Ended> ended = wait_for_one(running, at_most)) {
      RunningEvent event = std::move(running[ended->at]);
      running.erase(running.begin() + static_cast<std::ptrdiff_t>(ended->at));
      progress.count(event.row.id, finish_event(settings, event, ended->wait_status, ended->timed_out));
    }
  };
  CatalogueReader reader(o.catalogue, result_column_names());
  while (!g_interrupted) {
    const std::optional<CatalogueRow> row = reader.next();
    if (!row) break;
    switch (plan_for(*row, shard, settings, o.resume)) {
      case Plan::other_shard: break;
      case Plan::fault: progress.count(row->id, "failed", "the row cannot run"); break;
      case Plan::kept: progress.count(row->id, kept_status(settings, *row), "kept from before"); break;
      case Plan::measure:
        while (running.size() >= jobs && !g_interrupted) collect(std::chrono::milliseconds(1000));
        if (g_interrupted) break;
        try {
          running.push_back(start_event(settings, *row));
        } catch (const imaging::InputError& e) {
          err << ("occulta: problem: " + std::string(e.what()) + '\n');  // one write(2), as batch_mpi.cpp
          progress.not_started(row->id, e.what());
        }
        break;
    }
  }
  while (!running.empty() && !g_interrupted) collect(std::chrono::milliseconds(1000));
  const bool interrupted = g_interrupted != 0;
  stop_all(running);
  progress.finish();
  return close_run(o, settings, progress, interrupted, out);
}

}  // namespace occulta::app
