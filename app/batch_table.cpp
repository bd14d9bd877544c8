// app/batch_table.cpp — results.csv and results.fits gathered from the events' own files
// (contracts in batch_table.hpp).
#include "app/batch_table.hpp"

#include <fstream>

#include <nlohmann/json.hpp>

#include "app/csv.hpp"
#include "fit/json_file.hpp"
#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"

namespace occulta::app {
namespace fs = std::filesystem;
using nlohmann::json;
using Kind = imaging::TableColumnSpec::Kind;

namespace {

// Keys of result.json's shell block with their unit (FITS Standard 4.0 §4.3: deg, km/s,
// m/s2; solRad, the solar radius, among its additional units), each followed by its σ.
struct Keyed {
  const char* key;
  const char* unit;
};
constexpr Keyed kShellKeys[] = {{"lon_deg", "deg"},          {"lat_deg", "deg"},        {"tilt_deg", "deg"},
                                {"half_angle_deg", "deg"},   {"aspect_ratio", ""},      {"apex_height_rs", "solRad"},
                                {"speed_km_s", "km/s"},      {"accel_m_s2", "m/s2"},    {"face_on_width_deg", "deg"},
                                {"edge_on_width_deg", "deg"}};
constexpr Keyed kBoundaryKeys[] = {{"speed_km_s", "km/s"}, {"lon_deg", "deg"}, {"lat_deg", "deg"},
                                   {"half_width_deg", "deg"}};

std::vector<imaging::TableColumnSpec> make_columns() {
  std::vector<imaging::TableColumnSpec> c = {
      {"id", Kind::text, "", 1},       {"cme", Kind::integer, "", 1},          {"status", Kind::text, "", 1},
      {"problems", Kind::text, "", 1}, {"views", Kind::text, "", 1},           {"views_with_cme", Kind::integer, "", 1},
      {"frames_used", Kind::integer, "", 1}, {"shell_direction_basis", Kind::text, "", 1}};
  for (const Keyed& k : kShellKeys) {
    c.push_back({std::string("shell_") + k.key, Kind::real, k.unit, 1});
    c.push_back({std::string("shell_") + k.key + "_sigma", Kind::real, k.unit, 1});  // σ of K is K_sigma (README)
  }
  c.push_back({"shell_ref_time", Kind::text, "", 1});
  c.push_back({"shell_residual_rms_rs", Kind::real, "solRad", 1});
  c.push_back({"boundary_time", Kind::text, "", 1});
  c.push_back({"boundary_time_sigma_s", Kind::real, "s", 1});
  for (const Keyed& k : kBoundaryKeys) {
    c.push_back({std::string("boundary_") + k.key, Kind::real, k.unit, 1});
    c.push_back({std::string("boundary_") + k.key + "_sigma", Kind::real, k.unit, 1});
  }
  for (const char* key : {"arrival_target", "arrival_time_p05", "arrival_time_p50", "arrival_time_p95"})
    c.push_back({key, Kind::text, "", 1});
  c.push_back({"arrival_hit_probability", Kind::real, "", 1});
  c.push_back({"arrival_speed_km_s_p50", Kind::real, "km/s", 1});
  return c;
}

// A value of result.json as the table's text: strings as they are, numbers as JSON writes
// them (the shortest text that reads back as the same double), anything else "".
std::string text_of(const json& value) {
  if (value.is_string()) return value.get<std::string>();
  if (value.is_number() || value.is_boolean()) return value.dump();
  return "";
}

const json& member(const json& object, const char* key) {
  static const json none;
  return object.is_object() && object.contains(key) ? object[key] : none;
}

std::string joined(const json& problems) {
  std::string text;
  if (problems.is_array())
    for (const json& p : problems)
      if (p.is_string()) text += (text.empty() ? "" : " ") + p.get<std::string>();
  return text;
}

// The CMEs a result lists, each as {index, shell, boundary, arrival} and, when the window
// holds several (result.json's `cmes`, in index order), the CME's own status, problems and
// views. One CME: the result's own blocks, index 1.
std::vector<json> cmes_of(const json& result) {
  if (member(result, "cmes").is_array()) {
    std::vector<json> cmes;
    for (const json& c : result["cmes"])
      if (c.is_object()) cmes.push_back(c);
    return cmes;
  }
  if (!member(result, "shell").is_object()) return {};
  return {json{{"index", 1}, {"shell", result["shell"]}, {"boundary", member(result, "boundary")},
               {"arrival", member(result, "arrival")}}};
}

// What a list of views says: their names joined by ';', how many found the CME, frames used.
struct ViewsSummary {
  std::string names;
  long long with_cme = 0, frames = 0;
};
ViewsSummary views_of(const json& views) {
  ViewsSummary s;
  for (const json& v : views.is_array() ? views : json::array()) {
    s.names += (s.names.empty() ? "" : ";") + text_of(member(v, "name"));
    s.with_cme += member(v, "found") == true;
    if (member(v, "frames_used").is_number_integer()) s.frames += member(v, "frames_used").get<long long>();
  }
  return s;
}

std::vector<std::string> one_row(const std::string& id, const std::string& cme, const std::string& status,
                                 const std::string& problems) {
  std::vector<std::string> row(result_columns().size());
  row[0] = id;
  row[1] = cme;
  row[2] = status;
  row[3] = problems;
  return row;
}

}  // namespace

const std::vector<imaging::TableColumnSpec>& result_columns() {
  static const std::vector<imaging::TableColumnSpec> columns = make_columns();
  return columns;
}

std::vector<std::string> result_column_names() {
  std::vector<std::string> names;
  for (const auto& c : result_columns()) names.push_back(c.name);
  return names;
}

std::vector<std::vector<std::string>> table_rows(const BatchSettings& settings, const CatalogueRow& row,
                                                 const StartFailures& not_started) {
  std::vector<std::vector<std::string>> rows;
  const fs::path folder = event_folder(settings, row.id);
  std::error_code error;
  if (!row.fault.empty()) {
    rows.push_back(one_row(row.id, "", "failed", row.fault));
  } else if (const auto started = not_started.find(row.id); started != not_started.end()) {
    rows.push_back(one_row(row.id, "", "failed", started->second));
  } else if (!stamp_matches(settings, row)) {
    rows.push_back(one_row(row.id, "", "not_run",
                           "not measured yet from this row with these options in " + settings.out_dir.string() + "."));
  } else if (fs::is_regular_file(folder / "result.json", error)) {
    json result;
    try {
      result = fit::read_json_file(folder / "result.json");
      if (!result.is_object() || result.value("schema", json()) != "occulta.result/1" || !result["status"].is_string())
        throw imaging::InputError((folder / "result.json").string(), "is not a result file of occulta measure");
    } catch (const imaging::InputError& e) {
      rows.push_back(one_row(row.id, "", "failed", e.what()));
      for (auto& r : rows) r.insert(r.end(), row.extra.begin(), row.extra.end());
      return rows;
    }
    const std::string status = result["status"].get<std::string>();
    const std::string problems = joined(member(result, "problems"));
    const ViewsSummary views = views_of(member(result, "views"));
    const std::vector<json> cmes = cmes_of(result);
    if (cmes.empty()) {
      auto r = one_row(row.id, "", status, problems);
      r[4] = views.names;
      r[5] = std::to_string(views.with_cme);
      r[6] = std::to_string(views.frames);
      rows.push_back(std::move(r));
    }
    for (const json& cme : cmes) {
      const json& shell = member(cme, "shell");
      const json& boundary = member(cme, "boundary");
      const json& arrival = member(cme, "arrival");
      // Several CMEs: each row has its own status, problems and views; one: the event's.
      const bool own = member(cme, "status").is_string();
      const ViewsSummary cme_views = own ? views_of(member(cme, "views")) : views;
      std::vector<std::string> r = {row.id, text_of(member(cme, "index")),
                                    own ? cme["status"].get<std::string>() : status,
                                    own ? joined(member(cme, "problems")) : problems, cme_views.names,
                                    std::to_string(cme_views.with_cme), std::to_string(cme_views.frames),
                                    text_of(member(shell, "direction_basis"))};
      for (const Keyed& k : kShellKeys) {
        r.push_back(text_of(member(shell, k.key)));
        r.push_back(text_of(member(member(shell, "sigma"), k.key)));
      }
      r.push_back(text_of(member(shell, "ref_time")));
      r.push_back(text_of(member(shell, "residual_rms_rs")));
      r.push_back(text_of(member(boundary, "time")));
      r.push_back(text_of(member(member(boundary, "sigma"), "time_s")));
      for (const Keyed& k : kBoundaryKeys) {
        r.push_back(text_of(member(boundary, k.key)));
        r.push_back(text_of(member(member(boundary, "sigma"), k.key)));
      }
      // The first target's estimate (the event's forecast block orders them; Earth by default).
      const json first = arrival.is_array() && !arrival.empty() ? arrival[0] : json();
      for (const char* key : {"target", "time_p05", "time_p50", "time_p95", "hit_probability", "speed_km_s_p50"})
        r.push_back(text_of(member(first, key)));
      rows.push_back(std::move(r));
    }
  } else {
    json failure;
    try {
      failure = fit::read_json_file(folder / "failure.json");
    } catch (const imaging::InputError& e) {
      failure = {{"problems", {std::string(e.what())}}};
    }
    rows.push_back(one_row(row.id, "", "failed", joined(member(failure, "problems"))));
  }
  for (auto& r : rows) r.insert(r.end(), row.extra.begin(), row.extra.end());
  return rows;
}

TableCounts write_tables(const BatchSettings& settings, const fs::path& catalogue, const StartFailures& not_started) {
  const fs::path csv_path = settings.out_dir / "results.csv", fits_path = settings.out_dir / "results.fits";
  const fs::path csv_pending = imaging::pending_path(csv_path);
  TableCounts counts;
  std::vector<imaging::TableColumnSpec> columns = result_columns();
  {
    CatalogueReader reader(catalogue, result_column_names());
    for (const std::string& name : reader.extra_columns()) columns.push_back({name, Kind::text, "", 1});
    std::ofstream out(csv_pending, std::ios::binary);
    if (!out) throw imaging::InputError(csv_path.string(), "cannot be written: its temporary cannot be made");
    for (std::size_t i = 0; i < columns.size(); ++i) out << (i ? "," : "") << csv_quoted(columns[i].name);
    out << '\n';
    while (const std::optional<CatalogueRow> row = reader.next())
      for (const std::vector<std::string>& r : table_rows(settings, *row, not_started)) {
        for (std::size_t i = 0; i < r.size(); ++i) out << (i ? "," : "") << csv_quoted(r[i]);
        out << '\n';
        ++counts.rows;
        const std::string& status = r[2];
        (status == "ok" ? counts.ok : status == "partial" ? counts.partial : status == "failed" ? counts.failed
                                                                                               : counts.not_run)++;
      }
    out.close();
    if (!out) {
      std::error_code ignored;
      fs::remove(csv_pending, ignored);
      throw imaging::InputError(csv_path.string(), "cannot be written: the disk refused the temporary");
    }
  }
  // results.fits from the CSV just written (not yet in place): the widths of its text
  // columns first, then the rows, each text spelled in ASCII as FITS tables need.
  try {
    std::vector<std::string> fields;
    std::size_t line = 0;
    {
      std::ifstream in(csv_pending, std::ios::binary);
      read_csv_record(in, fields, line);  // the header
      while (read_csv_record(in, fields, line))
        for (std::size_t i = 0; i < columns.size() && i < fields.size(); ++i)
          if (columns[i].kind == Kind::text)
            columns[i].width = std::max(columns[i].width, static_cast<int>(imaging::ascii_spelling(fields[i]).size()));
    }
    imaging::FitsTableWriter table(fits_path, "RESULTS", columns);
    std::ifstream in(csv_pending, std::ios::binary);
    line = 0;
    read_csv_record(in, fields, line);
    while (read_csv_record(in, fields, line)) {
      for (std::size_t i = 0; i < columns.size() && i < fields.size(); ++i)
        if (columns[i].kind == Kind::text) fields[i] = imaging::ascii_spelling(fields[i]);
      table.add_row(fields);
    }
    table.commit();
  } catch (...) {
    std::error_code ignored;
    fs::remove(csv_pending, ignored);
    throw;
  }
  imaging::commit_pending(csv_pending, csv_path);
  return counts;
}

}  // namespace occulta::app
