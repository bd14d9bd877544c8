// app/catalogue.hpp — the catalogue file of a catalogue run (DESIGN.md "File contracts"),
// read one row at a time so that a catalogue of any length streams in constant memory.
//
// CSV (app/csv.hpp) with a header row naming the columns. One event per row, in one of
// two forms, chosen by the header:
//   id,event              event: path to an event file (*.event.json)
//   id,start,end,views    start, end: ISO 8601 UTC (the event's window); views:
//                         `name=glob;name=glob` — frames grouped by view, observers
//                         from the headers
// Paths and globs are relative to the catalogue's folder. Any other column passes
// through to the results, in the order of the header. Blank lines are skipped.
//
// A fault of the header (a form missing, a name twice, an extra column with the name
// of a results column) is an InputError naming the file: nothing can run. A fault of
// one row (a field count, an unsafe or repeated id, an id that is the name of the run's
// own events/, results.csv or results.fits, a time, a view list) is kept as the
// row's `fault` sentence: that row fails, the others run.
#pragma once

#include <cstddef>
#include <filesystem>
#include <fstream>
#include <map>
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace occulta::app {

struct CatalogueRow {
  std::size_t index = 0;  // 0-based among the data rows, in file order (what --shard divides)
  std::size_t line = 0;   // 1-based line in the file where the row starts
  std::string id;
  std::filesystem::path event;                             // event form: absolute, normalised
  std::string start, end;                                  // window form: as written
  std::vector<std::pair<std::string, std::string>> views;  // window form: name, absolute glob
  std::vector<std::string> extra;                          // the extra columns' values
  std::string fault;  // "" when the row can run; else one sentence naming file and line
};

class CatalogueReader {  // owns the open file and the ids seen (to refuse a repeated one)
 public:
  // Opens the file and reads the header; InputError(path, …) for a header fault.
  // `reserved`: the names an extra column may not take (the results' own columns).
  CatalogueReader(const std::filesystem::path& path, const std::vector<std::string>& reserved);
  const std::vector<std::string>& extra_columns() const { return extra_names_; }
  // The next row, or nullopt at the end; InputError(path, …) when the file cannot be
  // read further (an unclosed quote).
  std::optional<CatalogueRow> next();

 private:
  std::filesystem::path path_, base_;
  std::ifstream in_;
  std::size_t line_ = 0, rows_ = 0;
  std::size_t columns_ = 0;
  int id_ = -1, event_ = -1, start_ = -1, end_ = -1, views_ = -1;
  std::vector<int> extra_at_;
  std::vector<std::string> extra_names_;
  std::map<std::string, std::size_t> seen_;  // id → line: a few bytes a row, never the results
};

}  // namespace occulta::app
