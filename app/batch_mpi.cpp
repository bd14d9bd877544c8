// app/batch_mpi.cpp — `occulta batch --mpi` under mpirun (OpenMPI): rank 0 streams the
// catalogue and hands out one event at a time to whichever rank is free, so one long
// event never idles the rest; ranks 1…N−1 measure each event in a child process exactly
// as the local pool does (app/batch_event.hpp) into the shared folder. Rank 0 then
// writes the tables and every rank exits with its exit code.
//
// Messages (MPI_CHAR): worker → 0 "ready" (tag kReady) or "<id>\t<status>" (tag kDone),
// "<id>\tfailed\t<sentence>" for an event whose child could not be started;
// 0 → worker a row as JSON (tag kWork) or nothing (tag kStop). Waiting ranks look for
// messages with MPI_Iprobe every few milliseconds rather than block in MPI: OpenMPI's
// blocking calls spin and would take a core from the measuring children.
#include <mpi.h>

#include <chrono>
#include <filesystem>
#include <ostream>
#include <thread>

#include <nlohmann/json.hpp>

#include "app/batch_run.hpp"
#include "app/batch_table.hpp"
#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"

namespace occulta::app {
namespace fs = std::filesystem;
using nlohmann::json;

namespace {

constexpr int kReady = 1, kDone = 2, kWork = 3, kStop = 4;

struct Message {
  int source = 0, tag = 0;
  std::string text;
};

// The next message from `source` (or any), looked for every 5 ms.
Message receive(int source) {
  MPI_Status status;
  for (int flag = 0;;) {
    MPI_Iprobe(source, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &status);
    if (flag) break;
    std::this_thread::sleep_for(std::chrono::milliseconds(5));
  }
  int count = 0;
  MPI_Get_count(&status, MPI_CHAR, &count);
  Message m{status.MPI_SOURCE, status.MPI_TAG, std::string(static_cast<std::size_t>(count), '\0')};
  MPI_Recv(m.text.data(), count, MPI_CHAR, status.MPI_SOURCE, status.MPI_TAG, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
  return m;
}

void send(int to, int tag, const std::string& text) {
  MPI_Send(text.data(), static_cast<int>(text.size()), MPI_CHAR, to, tag, MPI_COMM_WORLD);
}

json row_json(const CatalogueRow& r) {
  return {{"index", r.index}, {"line", r.line},   {"id", r.id},       {"event", r.event.string()}, {"start", r.start},
          {"end", r.end},     {"views", r.views}, {"extra", r.extra}, {"fault", r.fault}};
}

CatalogueRow row_from(const json& j) {
  CatalogueRow r;
  r.index = j["index"];
  r.line = j["line"];
  r.id = j["id"];
  r.event = j["event"].get<std::string>();
  r.start = j["start"];
  r.end = j["end"];
  r.views = j["views"].get<std::vector<std::pair<std::string, std::string>>>();
  r.extra = j["extra"].get<std::vector<std::string>>();
  r.fault = j["fault"];
  return r;
}

// A worker: measure what rank 0 sends until it says stop.
void work(const BatchSettings& settings) {
  send(0, kReady, "ready");
  for (;;) {
    const Message m = receive(0);
    if (m.tag == kStop) return;
    const CatalogueRow row = row_from(json::parse(m.text));
    std::string done;
    try {
      std::vector<RunningEvent> running = {start_event(settings, row)};
      std::optional<Ended> ended;
      while (!(ended = wait_for_one(running, std::chrono::milliseconds(1000)))) {
      }
      done = row.id + '\t' + finish_event(settings, running[0], ended->wait_status, ended->timed_out);
    } catch (const imaging::InputError& e) {
      // Could not start: a failed row with the sentence, as in the local pool.
      done = row.id + "\tfailed\t" + e.what();
    }
    send(0, kDone, done);
  }
}

// Rank 0: hand out the events, count what comes back, stop the workers, write the tables.
int coordinate(const BatchOptions& o, const BatchSettings& settings, const Shard& shard, int ranks, std::ostream& out,
               std::ostream& err) {
  Progress progress(rows_in_share(o.catalogue, shard), o.quiet, out);
  const auto take = [&](const Message& m) {
    if (m.tag != kDone) return;
    const std::size_t tab = m.text.find('\t'), second = m.text.find('\t', tab + 1);
    if (second == std::string::npos) {
      progress.count(m.text.substr(0, tab), m.text.substr(tab + 1));
    } else {
      const std::string sentence = m.text.substr(second + 1);
      // One insertion, so one write(2) into unbuffered stderr: under mpirun the progress
      // line on stdout was seen forwarded in the middle of a line written in pieces.
      err << ("occulta: problem: " + sentence + '\n');
      progress.not_started(m.text.substr(0, tab), sentence);
    }
  };
  CatalogueReader reader(o.catalogue, result_column_names());
  while (const std::optional<CatalogueRow> row = reader.next()) {
    switch (plan_for(*row, shard, settings, o.resume)) {
      case Plan::other_shard: break;
      case Plan::fault: progress.count(row->id, "failed", "the row cannot run"); break;
      case Plan::kept: progress.count(row->id, kept_status(settings, *row), "kept from before"); break;
      case Plan::measure: {
        const Message free = receive(MPI_ANY_SOURCE);  // a worker that is ready, or done with one
        take(free);
        send(free.source, kWork, fit::json_text(row_json(*row)));
        break;
      }
    }
  }
  for (int stopped = 0; stopped < ranks - 1; ++stopped) {
    const Message free = receive(MPI_ANY_SOURCE);
    take(free);
    send(free.source, kStop, "");
  }
  progress.finish();
  return close_run(o, settings, progress, false, out);
}

}  // namespace

int batch_mpi(const BatchOptions& o, std::ostream& out, std::ostream& err) {
  const Shard shard = parse_shard(o.shard);
  const BatchSettings settings = settings_from(o);
  MPI_Init(nullptr, nullptr);
  int rank = 0, ranks = 1;
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  MPI_Comm_size(MPI_COMM_WORLD, &ranks);
  int code = 1;
  if (ranks < 2) {
    MPI_Finalize();
    throw imaging::InputError("--mpi", "needs at least 2 ranks (one hands out events, the others measure): "
                                       "mpirun -n 3 occulta batch … --mpi");
  }
  if (rank == 0) {
    // A fault of the catalogue or the folder stops every rank, not only this one.
    try {
      fs::create_directories(settings.out_dir);
      code = coordinate(o, settings, shard, ranks, out, err);
    } catch (...) {
      MPI_Abort(MPI_COMM_WORLD, 1);
      throw;
    }
  } else {
    work(settings);
  }
  MPI_Bcast(&code, 1, MPI_INT, 0, MPI_COMM_WORLD);
  MPI_Finalize();
  return code;
}

}  // namespace occulta::app
