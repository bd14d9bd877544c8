// app/measure_pictures.hpp — the quicklooks `measure` writes, drawn from the measurement
// (fit/measurement.hpp) and nothing else: per measured view, <view>/time_height.png (the
// time–height map at the track's PA with the track and the fitted law),
// <view>/front.png (the last running difference of the CME with its leading edge and PA
// span) and, for each view the shell was fitted to, <view>/shell.png (the fitted shell's
// outline over the running difference at three times). North up; ±4σ grey.
#pragma once

#include <filesystem>

#include "fit/measurement.hpp"

namespace occulta::app {

// Writes the pictures under out_dir/<view>/ (folders made as needed); InputError naming
// the file when one cannot be written. They are drawn on as many threads as the machine
// has cores (two here): each picture is independent, and its bytes do not depend on the
// thread or the order.
void write_measurement_pictures(const fit::Measurement& measurement, const std::filesystem::path& out_dir);

}  // namespace occulta::app
