// app/catalogue and app/csv: the catalogue read a row at a time — RFC 4180 quoting, the
// two forms, extra columns passed through, and every fault of the header (the file
// refused) or of a row (that row fails, in one sentence naming file and line).
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "app/catalogue.hpp"
#include "app/csv.hpp"
#include "imaging/input_error.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using occulta::app::CatalogueReader;
using occulta::app::CatalogueRow;

std::vector<CatalogueRow> read_all(const fs::path& path) {
  CatalogueReader reader(path, {"status", "problems"});
  std::vector<CatalogueRow> rows;
  while (auto row = reader.next()) rows.push_back(*row);
  return rows;
}

std::string header_fault(const fs::path& dir, const std::string& text) {
  occulta::test::spit(dir / "c.csv", text);
  try {
    read_all(dir / "c.csv");
  } catch (const occulta::imaging::InputError& e) {
    return e.what();
  }
  return "";
}

}  // namespace

TEST_CASE("catalogue: RFC 4180 records — quotes, doubled quotes, commas and line breaks inside, CRLF") {
  // RFC 4180 §2: fields with ',' '"' or line breaks are quoted; a quote inside is doubled.
  std::istringstream in("a,\"b,c\",\"say \"\"hi\"\"\"\r\n\"two\nlines\",,x\n");
  std::vector<std::string> fields;
  std::size_t line = 0;
  REQUIRE(occulta::app::read_csv_record(in, fields, line));
  CHECK(fields == std::vector<std::string>{"a", "b,c", "say \"hi\""});
  CHECK(line == 1);
  REQUIRE(occulta::app::read_csv_record(in, fields, line));
  CHECK(fields == std::vector<std::string>{"two\nlines", "", "x"});
  CHECK(line == 3);  // the record began on line 2 and ran to line 3
  CHECK_FALSE(occulta::app::read_csv_record(in, fields, line));
  for (const std::string text : {"plain", "a,b", "say \"hi\"", "two\nlines", ""}) {
    std::istringstream back(occulta::app::csv_quoted(text) + "\n");
    line = 0;
    REQUIRE(occulta::app::read_csv_record(back, fields, line));
    CHECK(fields == std::vector<std::string>{text});
  }
  std::istringstream open_quote("\"never closed\n");
  CHECK_THROWS_AS(occulta::app::read_csv_record(open_quote, fields, line), std::invalid_argument);
}

TEST_CASE("catalogue: both forms, extra columns, and the faults of one row kept as its sentence") {
  const fs::path dir = occulta::test::scratch_dir("catalogue_rows");
  occulta::test::spit(dir / "c.csv",
                      "id,start,end,views,observer note\n"
                      "e1,2031-01-01T00:00:00,2031-01-01T06:00:00,east=east/*.fits;west=/abs/w*.fits,\"quiet, slow\"\n"
                      "\n"
                      "../up,2031-01-01T00:00:00,2031-01-01T06:00:00,east=e/*.fits,x\n"
                      "e1,2031-01-01T00:00:00,2031-01-01T06:00:00,east=e/*.fits,x\n"
                      "e3,2031-02-30T00:00:00,2031-01-01T06:00:00,east=e/*.fits,x\n"
                      "e4,2031-01-01T06:00:00,2031-01-01T00:00:00,east=e/*.fits,x\n"
                      "e5,2031-01-01T00:00:00,2031-01-01T06:00:00,east,x\n"
                      "e6,2031-01-01T00:00:00,2031-01-01T06:00:00,a=x;a=y,x\n"
                      "e7,too,few\n"
                      "events,2031-01-01T00:00:00,2031-01-01T06:00:00,east=e/*.fits,x\n");
  const std::vector<CatalogueRow> rows = read_all(dir / "c.csv");
  REQUIRE(rows.size() == 9);
  const fs::path base = fs::absolute(dir).lexically_normal();
  CHECK(rows[0].fault.empty());
  CHECK(rows[0].index == 0);
  CHECK(rows[0].views.size() == 2);
  CHECK(rows[0].views[0].second == (base / "east/*.fits").string());
  CHECK(rows[0].views[1].second == "/abs/w*.fits");
  CHECK(rows[0].extra == std::vector<std::string>{"quiet, slow"});
  CHECK(rows[1].line == 4);  // the blank line is skipped, not counted as a row
  CHECK(rows[1].index == 1);
  const std::string file = (dir / "c.csv").string();
  CHECK(rows[1].fault.starts_with(file + " line 4: id \"../up\" names the event's folder"));
  CHECK(rows[2].fault == file + " line 5: id \"e1\" is used already on line 2.");
  CHECK(rows[3].fault.find("`start` is \"2031-02-30T00:00:00\"") != std::string::npos);
  CHECK(rows[4].fault.find("`end` 2031-01-01T00:00:00 comes before `start`") != std::string::npos);
  CHECK(rows[5].fault.find("`views` holds \"east\"; it needs name=glob") != std::string::npos);
  CHECK(rows[6].fault.find("view name \"a\" is used twice") != std::string::npos);
  CHECK(rows[7].fault == file + " line 10: has 3 fields where the header has 5.");
  CHECK(rows[8].fault.find("id \"events\" is the name of the run's own folder") != std::string::npos);

  occulta::test::spit(dir / "e.csv", "id,event\nx,events/x.event.json\n");
  const std::vector<CatalogueRow> event_rows = read_all(dir / "e.csv");
  REQUIRE(event_rows.size() == 1);
  CHECK(event_rows[0].event == base / "events/x.event.json");
}

TEST_CASE("catalogue: a header at fault refuses the whole file, naming it") {
  const fs::path dir = occulta::test::scratch_dir("catalogue_header");
  const std::string file = (dir / "c.csv").string();
  CHECK(header_fault(dir, "") == file + ": is empty; a catalogue starts with a header row such as id,event or id,start,end,views.");
  CHECK(header_fault(dir, "event\nx\n").find("has no `id` column") != std::string::npos);
  CHECK(header_fault(dir, "id,start,end\n").find("needs `event`, or all of `start`, `end` and `views`") !=
        std::string::npos);
  CHECK(header_fault(dir, "id,event,start,end,views\n").find("has both `event` and start/end/views") !=
        std::string::npos);
  CHECK(header_fault(dir, "id,event,note,note\n").find("names column \"note\" twice") != std::string::npos);
  CHECK(header_fault(dir, "id,event,status\n").find("column \"status\" has the name of a column occulta writes") !=
        std::string::npos);
  CHECK(header_fault(dir, "id,\"event\n").find("never closed") != std::string::npos);
}

TEST_CASE("catalogue: bytes that are not UTF-8 fail their row, or the file in the header, with a sentence") {
  // catalogue_fuzz: a view glob holding the byte 0x86 made the sentence's JSON quoting
  // throw, and `batch` stopped with an internal fault
  // (tests/fuzz/corpus/catalogue_fuzz/fuzz-not-utf8-view-glob.csv). Results tables and
  // JSON files are UTF-8 (RFC 3629), so such a field fails its row; the rest run.
  const fs::path dir = occulta::test::scratch_dir("catalogue_utf8");
  const std::string file = (dir / "c.csv").string();
  occulta::test::spit(dir / "c.csv",
                      "id,start,end,views,note\n"
                      "a,2031-03-14T06:00:00,2031-03-14T10:00:00,east=e/*.fit\x86s,caf\xc3\xa9\n"
                      "b\xe9,2031-03-14T06:00:00,2031-03-14T10:00:00,east=e/*.fits,x\n"
                      "c,2031-03-14T06:00:00,2031-03-14T10:00:00,east=e/*.fits,caf\xc3\xa9\n");
  const std::vector<CatalogueRow> rows = read_all(dir / "c.csv");
  REQUIRE(rows.size() == 3);
  CHECK(rows[0].fault == file + " line 2: field 4 holds bytes that are not UTF-8 text (RFC 3629): \"east=e/*.fit\xef\xbf\xbds\".");
  CHECK(rows[0].extra == std::vector<std::string>{"caf\xc3\xa9"});  // valid UTF-8 kept as it is
  CHECK(rows[1].fault.find("field 1 holds bytes that are not UTF-8") != std::string::npos);
  CHECK(rows[1].id == "b\xef\xbf\xbd");  // U+FFFD for the stray byte: the tables can name the row
  CHECK(rows[2].fault.empty());
  CHECK(header_fault(dir, "id,event,n\xffte\n") ==
        file + ": the header's column 3, \"n\xef\xbf\xbdte\", holds bytes that are not UTF-8 text (RFC 3629).");
}
