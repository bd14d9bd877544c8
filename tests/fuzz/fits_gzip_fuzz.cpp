// tests/fuzz/fits_gzip_fuzz.cpp — libFuzzer target for gzip-compressed FITS in memory.
// Input byte 0 chooses: even — the rest is the gzip stream itself (damaged streams,
// members, trailing bytes); odd — the rest is FITS bytes, gzip-compressed here first, so
// that mutations reach the HDU walk that bounds the uncompressed size (imaging/fits_gzip.cpp).
// Either way read_fits_memory must end in a result or an InputError.
#include <span>
#include <vector>

#include <zlib.h>

#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace occulta::imaging;
  if (size < 1) return 0;
  std::vector<std::uint8_t> bytes;
  if (data[0] % 2 == 0) {
    bytes.assign(data + 1, data + size);
  } else {
    z_stream stream{};
    // 16 + MAX_WBITS: write the gzip wrapper (zlib manual, deflateInit2).
    if (deflateInit2(&stream, 1, Z_DEFLATED, 16 + MAX_WBITS, 8, Z_DEFAULT_STRATEGY) != Z_OK) return 0;
    bytes.resize(deflateBound(&stream, size - 1) + 32);
    stream.next_in = const_cast<std::uint8_t*>(data + 1);
    stream.avail_in = static_cast<uInt>(size - 1);
    stream.next_out = bytes.data();
    stream.avail_out = static_cast<uInt>(bytes.size());
    const int status = deflate(&stream, Z_FINISH);
    bytes.resize(stream.total_out);
    deflateEnd(&stream);
    if (status != Z_STREAM_END) return 0;
  }
  try {
    read_fits_memory(std::as_bytes(std::span(bytes)), "fuzz input");
  } catch (const InputError&) {
  }
  return 0;
}
