// imaging/time.hpp — frame times.
//
// Inside occulta a time is UTC seconds since 2000-01-01T00:00:00 UTC, leap seconds
// ignored (each day has 86 400 s, as POSIX time does). Files carry ISO 8601
// (FITS Standard 4.0 §9.1.1: "YYYY-MM-DDThh:mm:ss[.sss…]", a date alone means 00:00).
#pragma once

#include <optional>
#include <string>
#include <string_view>

#include "imaging/fits.hpp"

namespace occulta::imaging {

inline constexpr double kMjdAt2000 = 51544.0;  // MJD of 2000-01-01T00:00:00 (common practice)

// ISO 8601 date-time → seconds. Accepts a trailing "Z"; rejects anything else with a
// std::invalid_argument whose message says what is wrong ("month 13 does not exist").
double utc_seconds_from_iso(std::string_view text);

// seconds → "YYYY-MM-DDThh:mm:ss.sss" with `decimals` fractional digits (0–6).
std::string iso_from_utc_seconds(double seconds, int decimals = 3);

double utc_seconds_from_mjd(double mjd);

struct FrameTime {
  double utc_s = 0.0;                 // start of the exposure
  std::optional<double> exposure_s;   // EXPTIME (or XPOSURE), when present
  std::string keyword;                // which keyword gave the time: DATE-OBS, DATE-BEG or MJD-OBS
};

// DATE-OBS, else DATE-BEG, else MJD-OBS. Throws InputError(source, ...) when none is
// usable, quoting the garbled value.
FrameTime read_frame_time(const Header& header, const std::string& source);

}  // namespace occulta::imaging
