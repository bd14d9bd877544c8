// imaging/fits_status.cpp — cfitsio status codes (fitsio.h) as the end of our own
// sentences. cfitsio's messages name its internal routines and are not for users.
#include "imaging/fits_cfitsio.hpp"

namespace occulta::imaging::fits_detail {

std::string describe_status(int status) {
  fits_clear_errmsg();
  switch (status) {
    case FILE_NOT_OPENED: return "it could not be opened";
    case FILE_NOT_CREATED: return "it could not be created";
    case WRITE_ERROR: return "writing it failed (is the disk full?)";
    case END_OF_FILE: return "the file ends early — it is truncated";
    case READ_ERROR: return "reading it failed part way — it is truncated or unreadable";
    case MEMORY_ALLOCATION: return "there was not enough memory to read it";
    case NO_QUOTE: return "a header text value lacks its closing quote";
    case BAD_KEYCHAR: return "a header card holds a character FITS does not allow (FITS Standard 4.0 §4.1.2.1)";
    case BAD_ORDER: return "its mandatory keywords are out of order (FITS Standard 4.0 §4.4.1)";
    case NO_END: return "a header has no END card — the file is truncated or not FITS";
    case BAD_BITPIX: return "BITPIX is not one of 8, 16, 32, 64, -32, -64 (FITS Standard 4.0 Table 8)";
    case BAD_NAXIS: return "NAXIS is missing or outside 0–999 (FITS Standard 4.0 §4.4.1.1)";
    case BAD_NAXES: return "an NAXISn keyword is missing or not a non-negative integer";
    case NOT_POS_INT: return "a header value that must be a positive integer is not one";
    case BAD_PCOUNT: return "an extension has an invalid PCOUNT";
    case BAD_GCOUNT: return "an extension has an invalid GCOUNT";
    case BAD_SIMPLE: return "SIMPLE is not T, so the file does not claim to follow the FITS Standard";
    case NO_SIMPLE: return "it is not a FITS file: it does not begin with SIMPLE (FITS Standard 4.0 §4.4.1.1)";
    case NO_BITPIX: return "the second header card is not BITPIX (FITS Standard 4.0 §4.4.1.1)";
    case NO_NAXIS: return "the third header card is not NAXIS (FITS Standard 4.0 §4.4.1.1)";
    case NO_XTENSION: return "an extension does not begin with XTENSION — data follow that no header describes";
    case UNKNOWN_REC: return "a header block holds a card that is not FITS";
    case BAD_HEADER_FILL: return "a header's fill after END is not blank (FITS Standard 4.0 §4.4.1)";
    case BAD_DATA_FILL: return "a data block's fill is not zero (FITS Standard 4.0 §3.3.2)";
    case BAD_TFORM:
    case BAD_TFORM_DTYPE: return "a compressed image's table has an invalid TFORM column format";
    case ZERO_SCALE: return "BSCALE is 0, which leaves no data (FITS Standard 4.0 §4.4.2.5)";
    case NEG_AXIS: return "an axis length is negative";
    case BAD_DIMEN: return "the image has a number of axes cfitsio cannot read";
    case BAD_C2I:
    case BAD_C2F:
    case BAD_C2D: return "a header number cannot be read as a number";
    case NUM_OVERFLOW: return "a pixel value overflows a 32-bit float";
    case DATA_DECOMPRESSION_ERR: return "its compressed image tiles could not be decompressed";
    case NO_COMPRESSED_TILE: return "a compressed image tile is missing";
    default: {
      char text[FLEN_STATUS] = {};
      fits_get_errstatus(status, text);
      return "cfitsio could not read it (status " + std::to_string(status) + ", \"" + text + "\")";
    }
  }
}

}  // namespace occulta::imaging::fits_detail
