// app/arrival_picture.hpp — a PNG histogram of one target's arrival times, for a person:
// arrival time across on a UTC axis (dates with their year where they change), members per
// bin up, the 5th/50th/95th percentiles marked and listed with their UTC times and hours
// after the boundary time; the caution (fit::kArrivalCaution) along the bottom. Drawn with
// the plotting layer (viewer/plot.hpp) and rendered headless (viewer/headless.hpp), DejaVu Sans.
#pragma once

#include <filesystem>

#include "fit/arrival.hpp"
#include "viewer/raster.hpp"

namespace occulta::app {

// The picture (opaque RGBA). boundary_utc_s: the time the hours are counted from.
viewer::Framebuffer arrival_histogram(const fit::TargetArrival& arrival, double boundary_utc_s);

// The same written as a PNG, whole or not at all; InputError naming the file when it cannot be.
void write_arrival_histogram(const std::filesystem::path& path, const fit::TargetArrival& arrival,
                             double boundary_utc_s);

}  // namespace occulta::app
