// tests/imaging/time_test.cpp — imaging/time against astropy.time, and its error sentences.
#include <cmath>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "imaging/input_error.hpp"
#include "imaging/time.hpp"
#include "tests/support/support.hpp"

namespace oi = occulta::imaging;

namespace {

// Runs tests/external/time_reference.py (astropy.time) and returns one JSON object per argument.
std::vector<nlohmann::json> astropy_times(const std::vector<std::string>& arguments) {
  std::string line;
  for (const auto& a : arguments) line += occulta::test::shell_quote(a) + " ";
  const auto result = occulta::test::run_python("tests/external/time_reference.py", line);
  REQUIRE_MESSAGE(result.exit_code == 0, result.output);
  const std::vector<nlohmann::json> rows = occulta::test::json_lines(result.output);
  REQUIRE(rows.size() == arguments.size() - (arguments.front() == "--mjd" ? 1 : 0));
  return rows;
}

std::string iso_error(const std::string& text) {
  try {
    oi::utc_seconds_from_iso(text);
  } catch (const std::invalid_argument& e) {
    return e.what();
  }
  return "(no error)";
}

std::string frame_error(const oi::Header& header) {
  try {
    oi::read_frame_time(header, "x.fits");
  } catch (const oi::InputError& e) {
    return e.what();
  }
  return "(no error)";
}

}  // namespace

TEST_CASE("time: ISO 8601 strings give the seconds and text astropy.time gives") {
  // Reference: astropy.time (Debian python3-astropy), UTC, two-part Julian dates whose
  // difference × 86 400 counts seconds without leap seconds — occulta's convention.
  const std::vector<std::string> inputs = {
      "2000-01-01T00:00:00",     "2031-03-04T07:00:12.345", "1999-12-31T23:59:59.999", "2024-02-29T12:00:00Z",
      "2031-03-04",              "2010-06-15T18:30",        "1980-01-06T00:00:00.5",   "2100-03-01T01:02:03.25",
      "1972-07-01T00:00:00.125", "2016-12-30T23:59:59"};
  // Not on a day that ends in a leap second (e.g. 2016-12-31): astropy stretches that
  // day's Julian-date fraction over 86 401 s, while occulta ignores leap seconds.
  const auto reference = astropy_times(inputs);
  for (std::size_t i = 0; i < inputs.size(); ++i) {
    CAPTURE(inputs[i]);
    const double seconds = oi::utc_seconds_from_iso(inputs[i]);
    CHECK(std::abs(seconds - reference[i]["seconds"].get<double>()) < 1e-5);
    CHECK(oi::iso_from_utc_seconds(seconds) == reference[i]["isot"].get<std::string>());
  }
}

TEST_CASE("time: MJD gives the seconds and text astropy.time gives") {
  // Reference: astropy.time, format "mjd", scale "utc".
  const std::vector<std::string> inputs = {"--mjd", "51544", "59000.25", "62500.1234567", "45000.75"};
  const auto reference = astropy_times(inputs);
  for (std::size_t i = 0; i < reference.size(); ++i) {
    CAPTURE(inputs[i + 1]);
    const double seconds = oi::utc_seconds_from_mjd(std::stod(inputs[i + 1]));
    CHECK(std::abs(seconds - reference[i]["seconds"].get<double>()) < 1e-5);
    CHECK(oi::iso_from_utc_seconds(seconds) == reference[i]["isot"].get<std::string>());
  }
}

TEST_CASE("time: formatting rounds once and carries into minutes, hours and days") {
  CHECK(oi::iso_from_utc_seconds(0.0) == "2000-01-01T00:00:00.000");
  CHECK(oi::iso_from_utc_seconds(0.0, 0) == "2000-01-01T00:00:00");
  CHECK(oi::iso_from_utc_seconds(86399.9996) == "2000-01-02T00:00:00.000");
  CHECK(oi::iso_from_utc_seconds(-0.25, 2) == "1999-12-31T23:59:59.75");
  CHECK(oi::iso_from_utc_seconds(12.3456789, 6) == "2000-01-01T00:00:12.345679");
  // ISO text round-trips at microsecond precision over centuries either side of 2000.
  for (const char* text : {"1901-02-28T13:14:15.123456", "2099-12-31T23:59:59.999999", "2000-02-29T00:00:00.000001"})
    CHECK(oi::iso_from_utc_seconds(oi::utc_seconds_from_iso(text), 6) == text);
  // A leap second lands on the next day's first second (leap seconds ignored, time.hpp).
  CHECK(oi::utc_seconds_from_iso("2016-12-31T23:59:60") == oi::utc_seconds_from_iso("2017-01-01T00:00:00"));
}

TEST_CASE("time: bad ISO strings say what is wrong") {
  CHECK(iso_error("2031-13-04T07:00") == "month 13 does not exist");
  CHECK(iso_error("2031-00-04") == "month 0 does not exist");
  CHECK(iso_error("2031-04-31T00:00") == "day 31 does not exist in April 2031");
  CHECK(iso_error("2031-02-29") == "day 29 does not exist in February 2031");
  CHECK(iso_error("2024-02-29") == "(no error)");  // 2024 is a leap year (Gregorian rule)
  CHECK(iso_error("2100-02-29") == "day 29 does not exist in February 2100");
  CHECK(iso_error("2031-03-04T25:00") == "hour 25 does not exist (hours run 00–23)");
  CHECK(iso_error("2031-03-04T07:61") == "minute 61 does not exist (minutes run 00–59)");
  CHECK(iso_error("2031-03-04T07:00:60") == "second 60 does not exist (seconds run 00–59)");
  const std::string garbled = "it is not an ISO 8601 date-time of the form YYYY-MM-DDThh:mm:ss.sss";
  for (const char* text : {"yesterday", "", "2031-3-4", "2031-03-04T", "2031-03-04 07:00:00", "2031-03-04T07:00:00.",
                           "2031-03-04T07:00:00Zulu", "2031-03-04T07"})
    CHECK_MESSAGE(iso_error(text) == garbled, text);
  CHECK(iso_error("04/03/98").find("old DD/MM/YY form") != std::string::npos);
}

TEST_CASE("time: read_frame_time takes DATE-OBS, then DATE-BEG, then MJD-OBS") {
  oi::Header h;
  h.set_real("MJD-OBS", 59000.25);
  auto t = oi::read_frame_time(h, "x.fits");
  CHECK(t.keyword == "MJD-OBS");
  CHECK(t.utc_s == doctest::Approx((59000.25 - 51544.0) * 86400.0));
  CHECK_FALSE(t.exposure_s.has_value());

  h.set_text("DATE-BEG", "2031-03-04T07:00:00");
  h.set_real("XPOSURE", 12.5);
  t = oi::read_frame_time(h, "x.fits");
  CHECK(t.keyword == "DATE-BEG");
  CHECK(t.utc_s == oi::utc_seconds_from_iso("2031-03-04T07:00:00"));
  CHECK(t.exposure_s == 12.5);

  h.set_text("DATE-OBS", "2031-03-04T06:59:30.5Z");
  h.set_real("EXPTIME", 3.0);
  t = oi::read_frame_time(h, "x.fits");
  CHECK(t.keyword == "DATE-OBS");
  CHECK(t.utc_s == oi::utc_seconds_from_iso("2031-03-04T06:59:30.5"));
  CHECK(t.exposure_s == 3.0);  // EXPTIME before XPOSURE

  // A date-only DATE-OBS with the time in TIME-OBS (older headers).
  oi::Header old;
  old.set_text("DATE-OBS", "2031-03-04");
  old.set_text("TIME-OBS", "07:08:09.5");
  CHECK(oi::read_frame_time(old, "x.fits").utc_s == oi::utc_seconds_from_iso("2031-03-04T07:08:09.5"));
}

TEST_CASE("time: read_frame_time errors quote the value and name the file") {
  oi::Header h;
  CHECK(frame_error(h) == "x.fits: it gives no observation time (none of DATE-OBS, DATE-BEG or MJD-OBS).");
  h.set_text("DATE-OBS", "2031-13-04T07:00");
  // The sentence STYLE.md gives as the example of an error at the edge.
  CHECK(frame_error(h) == "x.fits: DATE-OBS is \"2031-13-04T07:00\" — month 13 does not exist.");
  h.set_text("DATE-OBS", "soon");
  CHECK(frame_error(h) ==
        "x.fits: DATE-OBS is \"soon\" — it is not an ISO 8601 date-time of the form YYYY-MM-DDThh:mm:ss.sss.");
  h.set_real("DATE-OBS", 2031.0);
  CHECK(frame_error(h).find("DATE-OBS is not a text value") != std::string::npos);

  oi::Header m;
  m.set_text("MJD-OBS", "fifty thousand");
  CHECK(frame_error(m) == "x.fits: MJD-OBS is \"fifty thousand\" — not a number of days.");

  oi::Header e;
  e.set_text("DATE-OBS", "2031-03-04T07:00");
  e.set_text("EXPTIME", "long");
  CHECK(frame_error(e) == "x.fits: EXPTIME is \"long\" — not a number of seconds.");
  e.set_real("EXPTIME", -2.0);
  CHECK(frame_error(e) == "x.fits: EXPTIME is -2 — an exposure time cannot be negative.");
}
