// tests/fuzz/fits_fuzz.cpp — libFuzzer target: any bytes given to read_fits_memory, and
// the header of anything it accepts to read_geometry and read_frame_time, must end in a
// result or an InputError — never a crash, a sanitizer report or another exception.
#include <cstddef>
#include <cstdint>
#include <span>

#include "imaging/fits.hpp"
#include "imaging/geometry.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace occulta::imaging;
  try {
    const FitsImage image = read_fits_memory(std::as_bytes(std::span(data, size)), "fuzz input");
    try {
      read_geometry(image.header, image.source);
    } catch (const InputError&) {
    }
    try {
      read_frame_time(image.header, image.source);
    } catch (const InputError&) {
    }
  } catch (const InputError&) {
  }
  return 0;
}
