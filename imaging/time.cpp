// imaging/time.cpp — ISO 8601 ↔ UTC seconds since 2000-01-01, and a frame's time from
// its header (conventions in time.hpp).
#include "imaging/time.hpp"

#include <cctype>
#include <cmath>
#include <cstdio>
#include <stdexcept>

#include "imaging/input_error.hpp"

namespace occulta::imaging {

namespace {

constexpr double kSecondsPerDay = 86400.0;

// Days from 1970-01-01 to a proleptic Gregorian date, and back: H. Hinnant,
// "chrono-Compatible Low-Level Date Algorithms" (days_from_civil / civil_from_days).
// Eras of 400 years (146 097 days) make the arithmetic exact for any year.
long long days_from_civil(long long y, unsigned m, unsigned d) {
  y -= m <= 2;
  const long long era = (y >= 0 ? y : y - 399) / 400;
  const unsigned yoe = static_cast<unsigned>(y - era * 400);                 // [0, 399]
  const unsigned doy = (153 * (m > 2 ? m - 3 : m + 9) + 2) / 5 + d - 1;      // [0, 365]
  const unsigned doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;                // [0, 146096]
  return era * 146097 + static_cast<long long>(doe) - 719468;
}

struct Civil {
  long long year;
  unsigned month, day;
};

Civil civil_from_days(long long z) {
  z += 719468;
  const long long era = (z >= 0 ? z : z - 146096) / 146097;
  const unsigned doe = static_cast<unsigned>(z - era * 146097);
  const unsigned yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
  const unsigned doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
  const unsigned mp = (5 * doy + 2) / 153;
  const unsigned d = doy - (153 * mp + 2) / 5 + 1;
  const unsigned m = mp < 10 ? mp + 3 : mp - 9;
  return {static_cast<long long>(yoe) + era * 400 + (m <= 2), m, d};
}

const long long kDaysAt2000 = days_from_civil(2000, 1, 1);

bool is_leap(long long y) { return (y % 4 == 0 && y % 100 != 0) || y % 400 == 0; }

unsigned days_in_month(long long y, unsigned m) {
  static constexpr unsigned kDays[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  return m == 2 && is_leap(y) ? 29 : kDays[m - 1];
}

const char* month_name(unsigned m) {
  static constexpr const char* kNames[12] = {"January", "February", "March",     "April",   "May",      "June",
                                             "July",    "August",   "September", "October", "November", "December"};
  return kNames[m - 1];
}

[[noreturn]] void garbled() {
  throw std::invalid_argument("it is not an ISO 8601 date-time of the form YYYY-MM-DDThh:mm:ss.sss");
}

// A cursor over the text that reads fixed-width digit fields.
struct Reader {
  std::string_view text;
  std::size_t at = 0;

  bool done() const { return at == text.size(); }
  bool next_is(char c) const { return at < text.size() && text[at] == c; }
  unsigned digits(std::size_t n) {
    unsigned value = 0;
    for (std::size_t i = 0; i < n; ++i, ++at) {
      if (at >= text.size() || !std::isdigit(static_cast<unsigned char>(text[at]))) garbled();
      value = value * 10 + static_cast<unsigned>(text[at] - '0');
    }
    return value;
  }
  void expect(char c) {
    if (!next_is(c)) garbled();
    ++at;
  }
};

std::string trimmed(std::string_view text) {
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.back()))) text.remove_suffix(1);
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.front()))) text.remove_prefix(1);
  return std::string(text);
}

bool is_date_only(std::string_view text) { return trimmed(text).size() == 10; }

std::string in_quotes(std::string_view text) { return "\"" + std::string(text) + "\""; }

}  // namespace

double utc_seconds_from_iso(std::string_view input) {
  const std::string text = trimmed(input);
  // FITS Standard 4.0 §9.1.1 also allows the pre-1999 form "DD/MM/YY"; real frames of
  // interest are later, so it is refused with its own reason.
  if (text.size() == 8 && text[2] == '/' && text[5] == '/')
    throw std::invalid_argument("it is in the old DD/MM/YY form; occulta reads ISO 8601 (YYYY-MM-DDThh:mm:ss)");
  Reader r{text};
  const long long year = r.digits(4);
  r.expect('-');
  const unsigned month = r.digits(2);
  r.expect('-');
  const unsigned day = r.digits(2);
  unsigned hour = 0, minute = 0, second = 0;
  double fraction = 0.0;
  if (r.next_is('T')) {
    r.expect('T');
    hour = r.digits(2);
    r.expect(':');
    minute = r.digits(2);
    if (r.next_is(':')) {
      r.expect(':');
      second = r.digits(2);
      if (r.next_is('.')) {
        r.expect('.');
        double scale = 0.1;
        std::size_t n = 0;
        for (; !r.done() && std::isdigit(static_cast<unsigned char>(r.text[r.at])); ++r.at, ++n, scale *= 0.1)
          fraction += (r.text[r.at] - '0') * scale;
        if (n == 0) garbled();
      }
    }
  }
  if (r.next_is('Z')) r.expect('Z');  // UTC designator (ISO 8601); the time is UTC anyway
  if (!r.done()) garbled();

  char reason[96];
  if (month < 1 || month > 12) {
    std::snprintf(reason, sizeof reason, "month %u does not exist", month);
    throw std::invalid_argument(reason);
  }
  if (day < 1 || day > days_in_month(year, month)) {
    std::snprintf(reason, sizeof reason, "day %u does not exist in %s %lld", day, month_name(month), year);
    throw std::invalid_argument(reason);
  }
  if (hour > 23) {
    std::snprintf(reason, sizeof reason, "hour %u does not exist (hours run 00–23)", hour);
    throw std::invalid_argument(reason);
  }
  if (minute > 59) {
    std::snprintf(reason, sizeof reason, "minute %u does not exist (minutes run 00–59)", minute);
    throw std::invalid_argument(reason);
  }
  // Second 60 exists only in a leap second, which UTC inserts at 23:59:60. With leap
  // seconds ignored (time.hpp) it lands on the next day's 00:00:00, one second on.
  if (second > 60 || (second == 60 && (hour != 23 || minute != 59))) {
    std::snprintf(reason, sizeof reason, "second %u does not exist (seconds run 00–59)", second);
    throw std::invalid_argument(reason);
  }
  const long long days = days_from_civil(year, month, day) - kDaysAt2000;
  return static_cast<double>(days) * kSecondsPerDay + hour * 3600.0 + minute * 60.0 + second + fraction;
}

std::string iso_from_utc_seconds(double seconds, int decimals) {
  // Needs a finite time. Rounded once, in whole units of the last digit, so that a carry
  // (59.9996 s → "00.000" of the next minute) propagates through minutes, hours and days.
  decimals = decimals < 0 ? 0 : decimals > 6 ? 6 : decimals;
  long long unit = 1;
  for (int i = 0; i < decimals; ++i) unit *= 10;
  const long long total = std::llround(seconds * static_cast<double>(unit));
  const long long per_day = 86400LL * unit;
  long long days = total / per_day, in_day = total % per_day;
  if (in_day < 0) {
    in_day += per_day;
    --days;
  }
  const Civil date = civil_from_days(days + kDaysAt2000);
  const long long whole = in_day / unit, part = in_day % unit;
  char text[64];
  int n = std::snprintf(text, sizeof text, "%04lld-%02u-%02uT%02lld:%02lld:%02lld", date.year, date.month, date.day,
                        whole / 3600, whole / 60 % 60, whole % 60);
  if (decimals > 0) std::snprintf(text + n, sizeof text - n, ".%0*lld", decimals, part);
  return text;
}

double utc_seconds_from_mjd(double mjd) { return (mjd - kMjdAt2000) * kSecondsPerDay; }

FrameTime read_frame_time(const Header& header, const std::string& source) {
  FrameTime frame;
  const auto parse_card = [&](const char* key) -> std::optional<double> {
    const HeaderCard* card = header.find(key);
    if (!card) return std::nullopt;
    if (card->kind != HeaderCard::Kind::Text)
      throw InputError(source, std::string(key) + " is not a text value — it should be an ISO 8601 date-time");
    std::string value = card->text;
    // Older headers split the time into TIME-OBS beside a date-only DATE-OBS
    // (common practice, from memory); join them when that is what we see.
    if (std::string(key) == "DATE-OBS" && is_date_only(value))
      if (auto time_obs = header.text("TIME-OBS"); time_obs && !trimmed(*time_obs).empty())
        value = trimmed(value) + "T" + trimmed(*time_obs);
    try {
      return utc_seconds_from_iso(value);
    } catch (const std::invalid_argument& e) {
      throw InputError(source, std::string(key) + " is " + in_quotes(value) + " — " + e.what());
    }
  };

  if (auto t = parse_card("DATE-OBS")) {
    frame.utc_s = *t;
    frame.keyword = "DATE-OBS";
  } else if (auto t2 = parse_card("DATE-BEG")) {
    frame.utc_s = *t2;
    frame.keyword = "DATE-BEG";
  } else if (const HeaderCard* mjd = header.find("MJD-OBS")) {
    const auto value = header.number("MJD-OBS");
    if (!value || !std::isfinite(*value))
      throw InputError(source, "MJD-OBS is " + in_quotes(mjd->text) + " — not a number of days");
    frame.utc_s = utc_seconds_from_mjd(*value);
    frame.keyword = "MJD-OBS";
  } else {
    throw InputError(source, "it gives no observation time (none of DATE-OBS, DATE-BEG or MJD-OBS)");
  }

  for (const char* key : {"EXPTIME", "XPOSURE"}) {
    const HeaderCard* card = header.find(key);
    if (!card) continue;
    const auto value = header.number(key);
    if (!value || !std::isfinite(*value))
      throw InputError(source, std::string(key) + " is " + in_quotes(card->text) + " — not a number of seconds");
    if (*value < 0.0) {
      char reason[96];
      std::snprintf(reason, sizeof reason, "%s is %g — an exposure time cannot be negative", key, *value);
      throw InputError(source, reason);
    }
    frame.exposure_s = *value;
    break;
  }
  return frame;
}

}  // namespace occulta::imaging
