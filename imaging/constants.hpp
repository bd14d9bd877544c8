// imaging/constants.hpp — physical constants used across occulta, with their sources.
#pragma once

namespace occulta {

inline constexpr double kSolarRadiusKm = 695700.0;    // nominal R☉, IAU 2015 Resolution B3
inline constexpr double kAuKm = 149597870.7;          // astronomical unit, IAU 2012 Resolution B2
inline constexpr double kPi = 3.14159265358979323846;
inline constexpr double kDegPerRad = 180.0 / kPi;
inline constexpr double kRadPerDeg = kPi / 180.0;
inline constexpr double kArcsecPerRad = 180.0 * 3600.0 / kPi;

}  // namespace occulta
