// app/batch.hpp — `occulta batch CATALOGUE.csv --out DIR`: the catalogue run. Every row of
// the catalogue (app/catalogue.hpp) is measured by `occulta measure` in its own child
// process (app/batch_event.hpp) into DIR/<id>/, at most --jobs at a time; the table of all
// rows is written to DIR/results.csv and DIR/results.fits (app/batch_table.hpp) at the
// end of every run — a resumed, sharded or interrupted one too.
//
//   --resume        skip events measured before from the same row, options and inputs
//   --shard K/N     only the rows whose 0-based index i has i mod N = K − 1 (a scheduler's
//                   job array); shards may run at once on one folder: each event's files
//                   are its shard's alone, and every table is written under a temporary
//                   name, then renamed (no file locks are trusted)
//   --mpi           under mpirun: rank 0 hands out events one at a time, the other ranks
//                   measure them (app/batch_mpi.cpp)
//   --event-timeout S  a child running longer is stopped and its row fails (default 1800 s)
// Progress: on a terminal one line redrawn in place; otherwise one line per event.
// Exit: 0 when every row of this run's share is ok, 1 otherwise, 2 for usage.
#pragma once

#include <iosfwd>
#include <string>

namespace occulta::app {

struct BatchOptions {
  std::string catalogue;
  std::string out_dir;
  int jobs = 0;               // 0: the number of cores
  bool resume = false;
  std::string shard;          // "K/N", "" for all rows
  bool mpi = false;
  double event_timeout_s = 1800.0;
  bool quiet = false;
  int median = 5;             // passed on to measure
  std::string apex_law = "auto";
  bool checksum_warn_only = false;
};

int batch(const BatchOptions& options, std::ostream& out, std::ostream& err);

}  // namespace occulta::app
