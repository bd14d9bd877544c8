// app/batch_table.hpp — the catalogue run's table: results.csv and results.fits in the
// run's folder, gathered from each event's own files (DIR/<id>/result.json, else
// failure.json), never recomputed, in catalogue order. Both are written whole or not at
// all, at the end of every run.
//
// One row per CME a catalogue row's window holds, in result.json's order (cme = the CME's
// index, 1 when the window holds one; several each with their own status, problems and
// views); a row that could not run, or whose event failed, is one row with cme empty. Columns:
// ours (result_columns(), documented in the README), then the catalogue's extra columns
// as text. Numbers are written as result.json holds them (shortest text that reads back
// as the same double), missing values as "". No wall-clock value goes in, so two runs of
// the same catalogue and options give the same bytes.
//
// status: ok | partial | failed (as result.json; failed too for an event whose child could
// not be started in this run, with that sentence), or not_run — the event has no result
// made from this row and these options in the folder yet (another shard's event still to
// come, or a run stopped before it).
#pragma once

#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include "app/batch_event.hpp"
#include "app/catalogue.hpp"
#include "imaging/fits_table.hpp"

namespace occulta::app {

// Our columns, in order: name, kind, unit (TUNITn: FITS Standard 4.0 §4.3 unit strings).
const std::vector<imaging::TableColumnSpec>& result_columns();
std::vector<std::string> result_column_names();

// The table's rows for one catalogue row: our columns' values, then the row's extras.
// `not_started`: id → sentence for the events of this run whose child could not be started
// (their folder may hold nothing to say so).
using StartFailures = std::map<std::string, std::string>;
std::vector<std::vector<std::string>> table_rows(const BatchSettings& settings, const CatalogueRow& row,
                                                 const StartFailures& not_started = {});

struct TableCounts {
  std::size_t rows = 0, ok = 0, partial = 0, failed = 0, not_run = 0;
};

// Streams the catalogue again and writes DIR/results.csv, then DIR/results.fits (from the
// CSV just written, in two passes: the widths of the text columns, then the rows).
TableCounts write_tables(const BatchSettings& settings, const std::filesystem::path& catalogue,
                         const StartFailures& not_started = {});

}  // namespace occulta::app
