// app/catalogue.cpp — the catalogue read a row at a time (contracts in catalogue.hpp).
#include "app/catalogue.hpp"

#include <algorithm>
#include <stdexcept>

#include <nlohmann/json.hpp>

#include "app/csv.hpp"
#include "fit/json_file.hpp"
#include "fit/strict_json.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;
using imaging::InputError;

namespace {

// The text in double quotes as JSON writes it, for our sentences. Bytes that are not
// UTF-8 are shown as U+FFFD (fit/json_file.hpp): a catalogue is any bytes until checked.
std::string in_quotes(const std::string& text) { return fit::json_text(nlohmann::json(text)); }

// The text with every byte sequence that is not UTF-8 (RFC 3629) replaced by U+FFFD: the
// same text when it is UTF-8 already.
std::string as_utf8(const std::string& text) { return nlohmann::json::parse(in_quotes(text)).get<std::string>(); }

}  // namespace

CatalogueReader::CatalogueReader(const fs::path& path, const std::vector<std::string>& reserved)
    : path_(path), base_(fs::absolute(path).lexically_normal().parent_path()) {
  const std::string file = path.string();
  std::error_code error;
  if (!fs::exists(path, error)) throw InputError(file, "does not exist");
  if (fs::is_directory(path, error)) throw InputError(file, "is a folder, not a catalogue (CSV) file");
  in_.open(path, std::ios::binary);
  if (!in_) throw InputError(file, "cannot be opened for reading");
  std::vector<std::string> header;
  try {
    while (read_csv_record(in_, header, line_) && header.size() == 1 && header[0].empty()) {
    }
  } catch (const std::invalid_argument& e) {
    throw InputError(file, e.what());
  }
  if (header.empty() || (header.size() == 1 && header[0].empty()))
    throw InputError(file, "is empty; a catalogue starts with a header row such as id,event or id,start,end,views");
  columns_ = header.size();
  for (std::size_t i = 0; i < header.size(); ++i) {
    const std::string& name = header[i];
    // Column names and values go into results.csv, results.fits and JSON files, all UTF-8.
    if (as_utf8(name) != name)
      throw InputError(file, "the header's column " + std::to_string(i + 1) + ", " + in_quotes(name) +
                                 ", holds bytes that are not UTF-8 text (RFC 3629)");
    if (std::count(header.begin(), header.end(), name) > 1)
      throw InputError(file, "the header names column " + in_quotes(name) + " twice");
    int* known = name == "id" ? &id_ : name == "event" ? &event_ : name == "start" ? &start_ : name == "end" ? &end_
                 : name == "views" ? &views_ : nullptr;
    if (known) {
      *known = static_cast<int>(i);
      continue;
    }
    if (std::find(reserved.begin(), reserved.end(), name) != reserved.end())
      throw InputError(file, "column " + in_quotes(name) +
                                 " has the name of a column occulta writes into results.csv; rename it");
    extra_at_.push_back(static_cast<int>(i));
    extra_names_.push_back(name);
  }
  const bool window_form = start_ >= 0 || end_ >= 0 || views_ >= 0;
  if (id_ < 0) throw InputError(file, "the header has no `id` column; a catalogue needs id,event or id,start,end,views");
  if (event_ >= 0 && window_form)
    throw InputError(file, "the header has both `event` and start/end/views columns; use one form: id,event or "
                           "id,start,end,views");
  if (event_ < 0 && !(start_ >= 0 && end_ >= 0 && views_ >= 0))
    throw InputError(file, "the header needs `event`, or all of `start`, `end` and `views`, beside `id`");
}

std::optional<CatalogueRow> CatalogueReader::next() {
  std::vector<std::string> fields;
  std::size_t first_line = 0;
  try {
    do {
      first_line = line_ + 1;
      if (!read_csv_record(in_, fields, line_)) return std::nullopt;
    } while (fields.size() == 1 && fields[0].empty());
  } catch (const std::invalid_argument& e) {
    throw InputError(path_.string(), e.what());
  }
  CatalogueRow row;
  row.index = rows_++;
  row.line = first_line;
  const std::string where = path_.string() + " line " + std::to_string(first_line) + ": ";
  auto fail = [&](const std::string& what) {
    row.fault = where + what + ".";
    return row;
  };
  if (fields.size() != columns_)
    return fail("has " + std::to_string(fields.size()) + " fields where the header has " + std::to_string(columns_));
  // A field that is not UTF-8 fails its row; the row's id and extra columns are kept with
  // U+FFFD for those bytes, so that the results tables can name the row.
  for (int at : extra_at_) row.extra.push_back(as_utf8(fields[static_cast<std::size_t>(at)]));
  row.id = as_utf8(fields[static_cast<std::size_t>(id_)]);
  for (std::size_t i = 0; i < fields.size(); ++i)
    if (as_utf8(fields[i]) != fields[i])
      return fail("field " + std::to_string(i + 1) + " holds bytes that are not UTF-8 text (RFC 3629): " +
                  in_quotes(fields[i]));
  if (!fit::is_safe_name(row.id))
    return fail("id " + in_quotes(row.id) +
                " names the event's folder, so use letters, digits, '-', '_' and '.' only (not empty, not starting "
                "with '.', no \"..\")");
  // The run's own names in DIR (app/batch_event.hpp, app/batch_table.hpp) are not ids.
  if (row.id == "events" || row.id == "results.csv" || row.id == "results.fits")
    return fail("id " + in_quotes(row.id) + " is the name of the run's own folder or table in --out; choose another");
  if (const auto [at, fresh] = seen_.emplace(row.id, first_line); !fresh)
    return fail("id " + in_quotes(row.id) + " is used already on line " + std::to_string(at->second));
  if (event_ >= 0) {
    const std::string& event = fields[static_cast<std::size_t>(event_)];
    if (event.empty()) return fail("`event` is empty; give the path to an event file");
    row.event = (base_ / event).lexically_normal();
    return row;
  }
  row.start = fields[static_cast<std::size_t>(start_)];
  row.end = fields[static_cast<std::size_t>(end_)];
  double start_s = 0, end_s = 0;
  for (auto [name, text, value] : {std::tuple{"start", &row.start, &start_s}, std::tuple{"end", &row.end, &end_s}}) {
    try {
      *value = imaging::utc_seconds_from_iso(*text);
    } catch (const std::invalid_argument& e) {
      return fail(std::string("`") + name + "` is " + in_quotes(*text) + " — " + e.what());
    }
  }
  if (end_s < start_s) return fail("`end` " + row.end + " comes before `start` " + row.start);
  const std::string& views = fields[static_cast<std::size_t>(views_)];
  std::size_t from = 0;
  while (from <= views.size()) {
    const std::size_t to = std::min(views.find(';', from), views.size());
    const std::string item = views.substr(from, to - from);
    from = to + 1;
    const std::size_t eq = item.find('=');
    if (eq == std::string::npos || eq == 0 || eq + 1 == item.size())
      return fail("`views` holds " + in_quotes(item) + "; it needs name=glob, several joined by ';'");
    const std::string name = item.substr(0, eq), glob = item.substr(eq + 1);
    if (!fit::is_safe_name(name))
      return fail("view name " + in_quotes(name) + " names a folder, so use letters, digits, '-', '_' and '.' only");
    for (const auto& [other, _] : row.views)
      if (other == name) return fail("view name " + in_quotes(name) + " is used twice");
    row.views.emplace_back(name, (base_ / glob).lexically_normal().string());
  }
  return row;
}

}  // namespace occulta::app
