// imaging/fits_cfitsio.hpp — private to imaging/fits*.cpp: what the reader, the writer and
// the header code share on top of cfitsio. Nothing outside imaging/ includes it.
#pragma once

#include <cstdio>
#include <memory>
#include <vector>
#include <string>
#include <string_view>

#include <fitsio.h>

#include "imaging/fits.hpp"

namespace occulta::imaging::fits_detail {

// Closes a cfitsio handle, ignoring the status: used on paths that already failed.
struct Closer {
  void operator()(fitsfile* file) const {
    int status = 0;
    fits_close_file(file, &status);
  }
};
using FitsHandle = std::unique_ptr<fitsfile, Closer>;

// A cfitsio status code as the end of one of our sentences ("the header has no END
// card"), never cfitsio's own wording. Also clears cfitsio's message stack.
std::string describe_status(int status);

// Keywords that describe how one HDU is laid out rather than what it shows (FITS
// Standard 4.0 §4.4.1–4.4.2, tiled-image convention keywords Z*, checksums): never
// inherited from the primary header and never copied when writing.
bool is_structural(std::string_view key);

// One 80-character card → a typed record (FITS Standard 4.0 §4.1–4.2). A card whose
// value cannot be typed is kept as Undefined rather than refused.
HeaderCard parse_card(std::string_view card);

// All cards of the current HDU (for a tile-compressed image, the header of the image it
// holds, as cfitsio reconstructs it), long strings joined (FITS Standard 4.0 §4.2.1.2).
// Returns the cfitsio status.
int read_header_cards(fitsfile* file, bool compressed, Header& header);

// A tile-compressed image's header text, byte for byte what fits_convert_hdr2str gives,
// without the zero-filled data unit that call makes and drops on every read. The caller
// frees *text with fits_free_memory. Returns the cfitsio status.
int compressed_header_text(fitsfile* file, char** text, int* count);

// Verifies the current HDU's CHECKSUM and DATASUM when it has them (FITS Standard 4.0
// §4.4.2.7); a mismatch is refused or reported as set_checksum_policy() says. `where`
// begins the sentence ("its primary image").
void check_checksums(fitsfile* file, const std::string& source, const std::string& where);

// The most bytes a gzip-compressed FITS file may hold uncompressed (1 GiB: occulta's
// largest float32 image, kMaxPixels × 4 bytes).
inline constexpr std::size_t kMaxGzipBytes = kMaxPixels * 4;

// A gzip-compressed FITS file (RFC 1952) uncompressed with zlib, refused as soon as it
// holds more than its FITS headers account for (fits_gzip.cpp says how).
// Reads `file` from where it stands to its end.
std::vector<std::byte> gunzip_fits(std::FILE* file, const std::string& source);

}  // namespace occulta::imaging::fits_detail
