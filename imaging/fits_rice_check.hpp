// imaging/fits_rice_check.hpp — private to imaging/fits*.cpp and their tests: checks the
// tiles of a tile-compressed image before cfitsio decodes them.
//
// cfitsio 4.2's Rice decoder (fits_rdecomp*) reads ahead of a tile's compressed bytes
// within a block — a run of zero bytes in a unary code, a high-entropy block cut short —
// and checks for the end of the stream only after the tile, so a damaged tile makes it
// read (and crash) outside its buffer. Its HCOMPRESS and PLIO decoders are hand-written
// too; occulta does not read those. So every tile is traced here first. Its GZIP path
// grows its buffer for as long as a tile's stream gives bytes and leaks it on a damaged
// stream, so GZIP_1/GZIP_2 tiles are inflated here first too, bounded by their pixels.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include <fitsio.h>

namespace occulta::imaging::fits_detail {

// What tracing one tile's Rice stream found.
struct RiceTrace {
  std::size_t bytes_used = 0;  // bytes the decoder reads: the first value and every code up
                               // to the last bit of the last pixel (a whole stream: its
                               // stored length)
  std::string problem;         // empty when the stream codes exactly `pixels` values
                               // within its bytes; otherwise the fault, as a phrase
};

// Follows a Rice stream (Pence, Seaman & White 2009, §3 and Appendix; the layout cfitsio
// writes and reads) through `pixels` values without writing any: the first value raw in
// `bytepix` bytes, then per block of `blocksize` values a code of 3/4/5 bits (for
// bytepix 1/2/else 4, as cfitsio's decoders choose) giving fs + 1. Every bit read is
// checked against the end of `bytes` and every value against the width of the data.
// Takes blocksize ≥ 1 and pixels ≥ 1.
RiceTrace trace_rice(std::span<const unsigned char> bytes, long long pixels, int blocksize, int bytepix);

// The same trace, and the values it walks through (the trace's checks all hold, then
// every value is written): `pixels` values of `bytepix` bytes' width (1: unsigned, 2 and
// else 4: signed) to `values`. The first value is the stream's first, each next one the
// one before plus its difference modulo 2^bits. On a problem the values are partial.
RiceTrace decode_rice(std::span<const unsigned char> bytes, long long pixels, int blocksize, int bytepix,
                      std::int32_t* values);

// One tile of a compressed image as checked (for tests and diagnostics).
struct TileCheck {
  long long pixels = 0;        // pixels in the tile (smaller at the image's far edges)
  long long stored_bytes = 0;  // length of its COMPRESSED_DATA (0: stored another way)
  long long traced_bytes = -1; // Rice tiles: what trace_rice() read; −1 otherwise
};

// Checks every tile of the tile-compressed image in the current HDU of `file`, with the
// parameters cfitsio parsed from its header (compression type, ZTILEn, ZNAXISn,
// BLOCKSIZE, BYTEPIX, the columns it will read), reading each tile's bytes through
// cfitsio. Throws InputError(source, …) naming the first damaged tile; refuses the
// compression types occulta does not read. `where` names the image ("its image in HDU 2").
std::vector<TileCheck> check_compressed_tiles(fitsfile* file, const std::string& source, const std::string& where);

// The same check, paid once: where the image is Rice-coded integer data at its own width
// (8, 16 or 32 bits), one plane, no quantisation or per-tile null column, each tile's
// trace also decodes it and writes the image's pixels (width × height, NAXIS1 fastest) as
// fits_read_img(TFLOAT) gives them — (float)(v · BSCALE + BZERO), NaN where v is the
// BLANK/ZBLANK value — and returns true, with the count of pixels written that are NaN
// or ±Inf in `nonfinite` (counted as they are written, so the caller need not pass over
// the image again). Otherwise it only checks, writes nothing and returns false: cfitsio
// then decodes the tiles it checked.
bool check_and_decode_tiles(fitsfile* file, const std::string& source, const std::string& where, float* pixels,
                            long long width, long long height, std::size_t& nonfinite);

}  // namespace occulta::imaging::fits_detail
