// tests/fuzz/fits_disk_fuzz.cpp — libFuzzer target: any bytes as a FITS file on disk (the
// path measure and maps read, gzip-compressed files included: a gzip input is
// uncompressed under its headers' bound) through read_fits_header and read_fits must end
// in a result or an InputError — never a crash, a sanitizer report, a hang or another
// exception.
#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"
#include "tests/fuzz/fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace occulta::imaging;
  const std::filesystem::path path = occulta::fuzz::fuzz_file(data, size, "frame.fits");
  try {
    read_fits_header(path);
  } catch (const InputError&) {
  }
  try {
    read_fits(path);
  } catch (const InputError&) {
  }
  return 0;
}
