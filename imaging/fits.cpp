// imaging/fits.cpp — reading FITS images with cfitsio: choose the image HDU, check what
// its header claims against the bytes there are, then read header and pixels.
#include "imaging/fits.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <bit>
#include <charconv>
#include <functional>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <memory>
#include <mutex>
#include <fstream>
#include <limits>
#include <optional>
#include <system_error>

#include "imaging/fits_card_check.hpp"
#include "imaging/fits_cfitsio.hpp"
#include "imaging/fits_rice_check.hpp"
#include "imaging/input_error.hpp"

namespace occulta::imaging {

namespace {

using fits_detail::FitsHandle;

constexpr std::size_t kBlock = 2880;  // FITS Standard 4.0 §3.1: files are 2880-byte blocks

// What can be said from the first bytes alone, before cfitsio sees them.
void check_start(std::string_view head, std::uintmax_t size, const std::string& source) {
  if (size == 0) throw InputError(source, "the file is empty (0 bytes), so it holds no FITS image");
  // gzip-compressed FITS (a whole file compressed, not the tiled convention): the
  // readers uncompress it under a bound first (fits_gzip.cpp).
  if (head.size() >= 2 && static_cast<unsigned char>(head[0]) == 0x1f && static_cast<unsigned char>(head[1]) == 0x8b)
    return;
  // §4.4.1.1: a FITS file begins with the card SIMPLE = T, the keyword in columns 1–8
  // and the value indicator in columns 9–10.
  if (head.substr(0, 10) != std::string_view("SIMPLE  = ", 10))
    throw InputError(source, "it is not a FITS file: it does not begin with \"SIMPLE  =\" (FITS Standard 4.0 §4.4.1.1)");
  if (size < kBlock)
    throw InputError(source, "the file is truncated: it has " + std::to_string(size) +
                                 " bytes, less than the one 2880-byte header block every FITS file begins with "
                                 "(FITS Standard 4.0 §3.1)");
}

[[noreturn]] void fail(const std::string& source, const std::string& what, int status) {
  throw InputError(source, what + ": " + fits_detail::describe_status(status));
}

const char* hdu_kind(int type) {
  switch (type) {
    case ASCII_TBL: return "an ASCII table";
    case BINARY_TBL: return "a binary table";
    default: return "an image";
  }
}

struct Choice {
  int hdu = 0;  // 0-based
  bool compressed = false;
  int bitpix = 0;
  long long width = 0, height = 0;
};

// Reads an integer keyword of the current HDU's own header.
long long raw_integer(fitsfile* file, const char* key, const std::string& source) {
  long long value = 0;
  int status = 0;
  fits_read_key(file, TLONGLONG, key, &value, nullptr, &status);
  if (status != 0) fail(source, std::string("its compressed image table has no usable ") + key, status);
  return value;
}

// The file's bytes at an offset (fewer at its end): the disk file or the memory copy.
using ByteReader = std::function<std::string(long long offset, std::size_t count)>;

// The header that begins at `offset`: whole 2880-byte blocks up to the one holding the
// END card (FITS Standard 4.0 §4.4.1), or to the end of the file when there is none
// (cfitsio then says so). A header is bounded, so a file cannot make this read without end.
constexpr std::size_t kMaxHeaderBlocks = 1000;  // 36 000 cards; occulta's frames have a few hundred

std::string header_bytes(const ByteReader& read, long long offset, int hdu_number, const std::string& source) {
  std::string bytes;
  for (std::size_t block = 0; block < kMaxHeaderBlocks; ++block) {
    const std::string more = read(offset + static_cast<long long>(bytes.size()), kBlock);
    bytes += more;
    for (std::size_t at = bytes.size() - more.size(); at + 80 <= bytes.size(); at += 80)
      if (std::string_view(bytes).substr(at, 8) == "END     ") return bytes;
    if (more.size() < kBlock) return bytes;
  }
  throw InputError(source, "the header of HDU " + std::to_string(hdu_number) + " has no END card in its first " +
                               std::to_string(kMaxHeaderBlocks * kBlock / 80) + " cards, more than occulta reads");
}

// FITS Standard 4.0 §4.4.1: an HDU begins with SIMPLE or XTENSION, BITPIX, NAXIS,
// NAXIS1…NAXISn, then (extensions) PCOUNT, GCOUNT and (tables, §7.2.1 and §7.3.1)
// TFIELDS, in this order, all integers. Checked here before cfitsio parses a header:
// cfitsio 4.2 goes on to allocate by a value it failed to read when one of them is not
// an integer, and when one is missing or its card cannot be parsed (a keyword with bytes
// outside ASCII, found by fits_fuzz: ffgttb() fails, and the table set-up then callocs
// by an uninitialised field count, as valgrind shows).
void check_mandatory_cards(const ByteReader& read, long long offset, int hdu_number, const std::string& source) {
  const std::string bytes = header_bytes(read, offset, hdu_number, source);
  auto card = [&](std::size_t index) {
    return index * 80 + 80 <= bytes.size() ? std::string_view(bytes).substr(index * 80, 80) : std::string_view();
  };
  const std::string hdu = "the header of HDU " + std::to_string(hdu_number) + " is malformed: ";
  // The integer value of card `index`, which must have keyword `key` and the value
  // indicator "= " in bytes 9–10 (§4.1.2.2). cfitsio reads a card with "=" and no space
  // in its own ways (fits_fuzz: "NAXIS1  =#  8" in a table led to a calloc by an
  // uninitialised field count, "ZTILE1  =0  16" to a division by zero), so it is refused.
  auto integer = [&](std::size_t index, const std::string& key) -> long long {
    const std::string_view text = card(index);
    if (text.size() < 10 || text.substr(0, 8) != (key + std::string(8, ' ')).substr(0, 8) || text[8] != '=')
      throw InputError(source, hdu + "card " + std::to_string(index + 1) + " should be " + key +
                                   " (FITS Standard 4.0 §4.4.1 fixes the order of the first keywords)");
    if (text[9] != ' ')
      throw InputError(source, hdu + key + " has \"=\" without the space after it that makes a value indicator "
                                   "(FITS Standard 4.0 §4.1.2.2)");
    std::string_view value = text.substr(10);
    value = value.substr(0, value.find('/'));
    while (!value.empty() && value.front() == ' ') value.remove_prefix(1);
    while (!value.empty() && value.back() == ' ') value.remove_suffix(1);
    long long number = 0;
    const char* begin = value.data() + (!value.empty() && (value[0] == '+' || value[0] == '-') ? 1 : 0);
    const auto [end, error] = std::from_chars(begin, value.data() + value.size(), number);
    // Bytes outside printable ASCII are shown as '?' so the sentence stays readable text.
    std::string shown(value);
    for (char& c : shown)
      if (c < ' ' || c > '~') c = '?';
    if (value.empty() || error != std::errc() || end != value.data() + value.size())
      throw InputError(source, hdu + key + " is \"" + shown + "\", not an integer (FITS Standard 4.0 §4.4.1)");
    return value[0] == '-' ? -number : number;
  };
  // The tiled convention's image axes and tile sizes (Pence et al. 2009 §4) are positive
  // integers; cfitsio 4.2 divides by them on entering the HDU, before checking them.
  for (std::size_t index = 1; index < bytes.size() / 80 && card(index).substr(0, 3) != "END"; ++index) {
    const std::string_view text = card(index);
    std::string key(text.substr(0, 8));
    while (!key.empty() && key.back() == ' ') key.pop_back();
    const bool tiled = (key.starts_with("ZNAXIS") || key.starts_with("ZTILE")) &&
                       std::all_of(key.begin() + (key[1] == 'N' ? 6 : 5), key.end(),
                                   [](char c) { return c >= '0' && c <= '9'; });
    if (tiled && text.size() >= 10 && text[8] == '=' && integer(index, key) < 1)
      throw InputError(source, hdu + key + " is not a positive integer (tiled image convention, Pence et al. 2009 §4)");
  }
  // The Rice parameters of the tiled convention (Pence et al. 2009 §4: ZNAMEn =
  // 'BLOCKSIZE' or 'BYTEPIX' names ZVALn) are positive integers: cfitsio 4.2 divides by
  // the block size on entering the HDU (fits_fuzz: ZVAL1 = "0   32", read as 0).
  std::vector<std::string> rice_values;
  for (std::size_t index = 1; index < bytes.size() / 80 && card(index).substr(0, 3) != "END"; ++index) {
    const std::string_view text = card(index);
    if (!text.starts_with("ZNAME") || text.size() < 11 || text[8] != '=') continue;
    std::string_view value = text.substr(10);
    while (!value.empty() && (value.front() == ' ' || value.front() == '\'')) value.remove_prefix(1);
    if (value.starts_with("BLOCKSIZE") || value.starts_with("BYTEPIX")) {
      std::string number(text.substr(5, 3));
      while (!number.empty() && number.back() == ' ') number.pop_back();
      rice_values.push_back("ZVAL" + number);
    }
  }
  for (std::size_t index = 1; !rice_values.empty() && index < bytes.size() / 80 && card(index).substr(0, 3) != "END";
       ++index) {
    std::string key(card(index).substr(0, 8));
    while (!key.empty() && key.back() == ' ') key.pop_back();
    if (std::find(rice_values.begin(), rice_values.end(), key) != rice_values.end() && card(index)[8] == '=' &&
        integer(index, key) < 1)
      throw InputError(source, hdu + key + " is not a positive integer (tiled image convention, Pence et al. 2009 §4)");
  }
  // Bytes after the last HDU that do not begin an extension are cfitsio's to judge
  // (it stops there, as §3.5 allows special records); SIMPLE was checked by check_start().
  const std::string_view first = card(0);
  const bool extension = first.substr(0, 8) == "XTENSION";
  if (!extension && first.substr(0, 8) != "SIMPLE  ") return;
  // §7.2.1, §7.3.1: XTENSION = 'TABLE   ' or 'BINTABLE'. The standard puts the value in
  // column 11; cfitsio also reads it further right, so this does too.
  std::string_view kind = first.size() > 10 ? first.substr(10) : std::string_view();
  while (!kind.empty() && kind.front() == ' ') kind.remove_prefix(1);
  const bool table = extension && (kind.starts_with("'BINTABLE") || kind.starts_with("'TABLE ") ||
                                   kind.starts_with("'TABLE'"));
  integer(1, "BITPIX");
  const long long naxis = integer(2, "NAXIS");
  fits_detail::check_card_values(bytes, extension && kind.starts_with("'TABLE"), hdu, source);
  if (naxis < 0 || naxis > 999)
    throw InputError(source, hdu + "NAXIS is " + std::to_string(naxis) + ", outside 0–999 (FITS Standard 4.0 §4.4.1)");
  for (long long axis = 1; axis <= naxis; ++axis) integer(2 + axis, "NAXIS" + std::to_string(axis));
  if (!extension) return;
  integer(3 + naxis, "PCOUNT");
  integer(4 + naxis, "GCOUNT");
  if (!table) return;
  // A table has 0–999 fields (cfitsio allocates one record per field).
  const long long fields = integer(5 + naxis, "TFIELDS");
  if (fields < 0 || fields > 999)
    throw InputError(source, hdu + "TFIELDS is " + std::to_string(fields) + ", outside 0–999 (FITS Standard 4.0 §7.3.1)");
}

// An optional integer keyword of the current HDU's own header.
std::optional<long long> raw_optional(fitsfile* file, const char* key) {
  long long value = 0;
  int status = 0;
  fits_read_key(file, TLONGLONG, key, &value, nullptr, &status);
  if (status != 0) {
    fits_clear_errmsg();
    return std::nullopt;
  }
  return value;
}

// A compressed image's table promises tiles of ZTILE1 × ZTILE2 pixels (Pence et al. 2009
// §4; default one row per tile) whose bytes lie in the heap the descriptors point into
// (FITS Standard 4.0 §7.3.5). cfitsio allocates by both before checking either, so both
// are checked here against the image and the heap.
void check_tiles(fitsfile* file, long long width, long long height, long long rows, long long row_bytes,
                 long long heap, const std::string& source, const std::string& where) {
  const long long tile_x = raw_optional(file, "ZTILE1").value_or(width);
  const long long tile_y = raw_optional(file, "ZTILE2").value_or(1);
  if (tile_x < 1 || tile_y < 1 || tile_x > width || tile_y > height)
    throw InputError(source, where + " has tiles of " + std::to_string(tile_x) + " × " + std::to_string(tile_y) +
                                 " pixels, which do not fit its " + std::to_string(width) + " × " +
                                 std::to_string(height) + " image");
  // §7.3.5: the heap starts THEAP bytes after the table's start (default: right after it).
  const long long heap_start = raw_optional(file, "THEAP").value_or(row_bytes * rows);
  const long long heap_bytes = heap - (heap_start - row_bytes * rows);
  int status = 0, columns = 0;
  fits_get_num_cols(file, &columns, &status);
  if (status != 0) fail(source, where + " has a compressed table whose columns cannot be read", status);
  for (int column = 1; column <= columns; ++column) {
    int type = 0;
    LONGLONG repeat = 0, element_bytes = 0;
    fits_get_coltypell(file, column, &type, &repeat, &element_bytes, &status);
    if (status != 0) fail(source, where + " has a compressed table column that cannot be read", status);
    if (type >= 0) continue;  // fixed-length column, inside the rows already checked
    element_bytes = std::max<LONGLONG>(element_bytes, 1);
    for (long long row = 1; row <= rows; ++row) {
      LONGLONG length = 0, offset = 0;
      fits_read_descriptll(file, column, row, &length, &offset, &status);
      if (status != 0) fail(source, where + " has a compressed tile whose place cannot be read", status);
      if (length < 0 || offset < 0 || length > heap_bytes / element_bytes || offset > heap_bytes - length * element_bytes)
        throw InputError(source, "the file is damaged: tile " + std::to_string(row) + " of " + where +
                                     " lies outside the compressed data the file holds");
    }
  }
}

// The image HDU occulta reads (FITS Standard 4.0 §3.3 primary array, §7.1 IMAGE
// extension, tiled convention Pence et al. 2009): the first one whose axes hold data.
// Refuses what it cannot read before anything is allocated, and leaves `file` there.
// `file_size` is the number of bytes the file really has.
Choice choose_image(fitsfile* file, long long file_size, const ByteReader& read, const std::string& source) {
  std::string skipped;  // what came before, for a message when there is no image
  bool saw_table = false;
  for (int index = 0;; ++index) {
    int status = 0;
    if (index > 0) {
      LONGLONG header_start = 0, data_start = 0, data_end = 0;
      fits_get_hduaddrll(file, &header_start, &data_start, &data_end, &status);
      if (status == 0 && data_end < file_size) check_mandatory_cards(read, data_end, index + 1, source);
      fits_movrel_hdu(file, 1, nullptr, &status);
      if (status == END_OF_FILE) {
        fits_clear_errmsg();
        if (saw_table)
          throw InputError(source, "it holds no image, only tables (" + skipped + "), and occulta reads images");
        throw InputError(source, "it holds no image: every header has no data (" + skipped + ")");
      }
      if (status != 0) fail(source, "HDU " + std::to_string(index + 1) + " cannot be read", status);
    }
    int type = 0;
    fits_get_hdu_type(file, &type, &status);
    if (status != 0) fail(source, "HDU " + std::to_string(index + 1) + " cannot be read", status);
    if (!skipped.empty()) skipped += "; ";
    if (type != IMAGE_HDU) {
      saw_table = true;
      skipped += "HDU " + std::to_string(index + 1) + " is " + hdu_kind(type);
      continue;
    }
    const bool compressed = fits_is_compressed_image(file, &status) != 0;
    int bitpix = 0, naxis = 0;
    std::array<LONGLONG, 9> naxes{};
    fits_get_img_paramll(file, static_cast<int>(naxes.size()), &bitpix, &naxis, naxes.data(), &status);
    if (status != 0) fail(source, "the header of HDU " + std::to_string(index + 1) + " cannot be read", status);
    bool empty = naxis == 0;
    for (int axis = 0; axis < std::min<int>(naxis, naxes.size()); ++axis) empty = empty || naxes[axis] == 0;
    if (empty) {
      skipped += "HDU " + std::to_string(index + 1) + " has NAXIS = " + std::to_string(naxis) +
                 (naxis == 0 ? "" : " with an axis of length 0");
      continue;
    }

    const std::string where = index == 0 ? "its primary image" : "its image in HDU " + std::to_string(index + 1);
    if (naxis == 3 && naxes[2] > 1)
      throw InputError(source, where + " is a cube of " + std::to_string(naxes[2]) +
                                   " planes (NAXIS3 = " + std::to_string(naxes[2]) +
                                   "); occulta reads one image per file");
    if (naxis != 2 && naxis != 3)
      throw InputError(source, where + " has NAXIS = " + std::to_string(naxis) +
                                   "; occulta reads two-dimensional images (or a cube of one plane)");
    for (int axis = 0; axis < naxis; ++axis)
      if (naxes[axis] < 0)
        throw InputError(source, where + " has a negative NAXIS" + std::to_string(axis + 1));
    const long long width = naxes[0], height = naxes[1];
    // Compare with the bound by division: the product itself may overflow.
    if (width > static_cast<long long>(kMaxPixels) || height > static_cast<long long>(kMaxPixels) / width)
      throw InputError(source, where + " claims " + std::to_string(width) + " × " + std::to_string(height) +
                                   " pixels, more than occulta reads (" + std::to_string(kMaxPixels) +
                                   " pixels at most)");

    // The data the header promises must be in the file (§3.3.2: the data follow the
    // header; the final block's fill may be missing, so the unpadded size counts).
    LONGLONG header_start = 0, data_start = 0, data_end = 0;
    fits_get_hduaddrll(file, &header_start, &data_start, &data_end, &status);
    if (status != 0) fail(source, "the layout of HDU " + std::to_string(index + 1) + " cannot be read", status);
    LONGLONG needed = 0;
    if (compressed) {
      // The compressed image is a binary table: NAXIS1 × NAXIS2 bytes of rows then a
      // PCOUNT-byte heap (FITS Standard 4.0 §7.3.1, §7.3.5).
      const long long row_bytes = raw_integer(file, "NAXIS1", source);
      const long long rows = raw_integer(file, "NAXIS2", source);
      const long long heap = raw_integer(file, "PCOUNT", source);
      constexpr long long kHuge = std::numeric_limits<long long>::max() / 4;
      if (row_bytes < 0 || rows < 0 || heap < 0 || (row_bytes > 0 && rows > kHuge / row_bytes) || heap > kHuge)
        throw InputError(source, where + " is a compressed table whose size cannot be right");
      needed = row_bytes * rows + heap;
      if (needed <= file_size - data_start) check_tiles(file, width, height, rows, row_bytes, heap, source, where);
    } else {
      // An image has PCOUNT = 0 and GCOUNT = 1 (FITS Standard 4.0 §7.1.1; in a primary
      // header they belong to random groups, §6). cfitsio honours other values in any
      // HDU, placing the pixels after PCOUNT parameters — beyond the data this check
      // measures (fits_fuzz: a heap overflow reading a memory file past its end).
      const long long pcount = raw_optional(file, "PCOUNT").value_or(0);
      const long long gcount = raw_optional(file, "GCOUNT").value_or(1);
      if (pcount != 0 || gcount != 1)
        throw InputError(source, where + " has PCOUNT = " + std::to_string(pcount) + " and GCOUNT = " +
                                     std::to_string(gcount) + ", where an image has 0 and 1 (FITS Standard 4.0 §7.1.1)");
      needed = static_cast<LONGLONG>(std::abs(bitpix) / 8) * width * height;
    }
    const LONGLONG available = file_size > data_start ? file_size - data_start : 0;
    if (needed > available)
      throw InputError(source, "the file is truncated: " + where + " needs " + std::to_string(needed) +
                                   " bytes of data after its header, and the file holds only " +
                                   std::to_string(available));
    return Choice{index, compressed, bitpix, width, height};
  }
}

void inherit_primary(fitsfile* file, int hdu, Header& header, const std::string& source) {
  // An extension that says INHERIT = F wants none of the primary's keywords.
  if (const HeaderCard* inherit = header.find("INHERIT");
      inherit && inherit->kind == HeaderCard::Kind::Logical && inherit->integer == 0)
    return;
  int status = 0;
  fits_movabs_hdu(file, 1, nullptr, &status);
  Header primary;
  if (status == 0) status = fits_detail::read_header_cards(file, false, primary);
  if (status != 0) fail(source, "the primary header cannot be read", status);
  for (const HeaderCard& card : primary.cards) {
    if (card.kind == HeaderCard::Kind::Commentary || fits_detail::is_structural(card.key)) continue;
    if (!header.find(card.key)) header.cards.push_back(card);
  }
  fits_movabs_hdu(file, hdu + 1, nullptr, &status);
  if (status != 0) fail(source, "HDU " + std::to_string(hdu + 1) + " cannot be read again", status);
}

Header read_header(fitsfile* file, const Choice& choice, const std::string& source) {
  Header header;
  if (const int status = fits_detail::read_header_cards(file, choice.compressed, header); status != 0)
    fail(source, "the image header cannot be read", status);
  if (choice.hdu > 0) inherit_primary(file, choice.hdu, header, source);
  return header;
}

FitsImage read_open(fitsfile* file, long long file_size, const ByteReader& read, const std::string& source,
                    cv::Mat reuse = {}) {
  const Choice choice = choose_image(file, file_size, read, source);
  FitsImage image;
  image.source = source;
  image.hdu = choice.hdu;
  image.bitpix = choice.bitpix;
  image.compressed = choice.compressed;
  image.header = read_header(file, choice, source);
  fits_detail::check_checksums(
      file, source, choice.hdu == 0 ? "its primary image" : "its image in HDU " + std::to_string(choice.hdu + 1));

  // cv::Mat::create keeps the buffer when the size and type match; a shared one is not
  // written into (another Mat still shows it).
  if (reuse.u && reuse.u->refcount == 1) image.pixels = std::move(reuse);
  image.pixels.create(static_cast<int>(choice.height), static_cast<int>(choice.width), CV_32FC1);
  // cfitsio applies BSCALE/BZERO (§4.4.2.5: physical = BZERO + BSCALE × stored) and turns
  // integers equal to BLANK (§4.4.2.5) into the null value given, NaN. Uncompressed
  // floats are read with no null value, so NaN and ±Inf arrive as stored (§5.3).
  // cfitsio's tile decoders trust the bytes they are given (fits_rice_check.hpp): every
  // tile is traced first, so that a damaged one is refused rather than read past.
  // Integer Rice tiles (what cameras and occulta write) are decoded by that trace itself,
  // bit for bit what cfitsio gives, so each tile is decoded once (fits_rice_check.hpp).
  const bool decoded =
      choice.compressed &&
      fits_detail::check_and_decode_tiles(
          file, source, choice.hdu == 0 ? "its primary image" : "its image in HDU " + std::to_string(choice.hdu + 1),
          image.pixels.ptr<float>(), choice.width, choice.height, image.nonfinite_count);
  if (!decoded) {
    float nan = std::numeric_limits<float>::quiet_NaN();
    const bool stored_float = choice.bitpix < 0 && !choice.compressed;
    int any_null = 0, status = 0;
    fits_read_img(file, TFLOAT, 1, static_cast<LONGLONG>(image.pixels.total()), stored_float ? nullptr : &nan,
                  image.pixels.ptr<float>(), &any_null, &status);
    if (status != 0) fail(source, "its pixels cannot be read", status);
    // Counted on the bits (NaN and ±Inf: exponent bits all ones, IEEE 754-2008 §3.4), a
    // form the compiler vectorises; the decoded tiles were counted as they were written.
    const float* pixel = image.pixels.ptr<float>();
    for (std::size_t i = 0, n = image.pixels.total(); i < n; ++i)
      image.nonfinite_count += (std::bit_cast<std::uint32_t>(pixel[i]) & 0x7f800000u) == 0x7f800000u;
  }
  return image;
}

// The first bytes of a file on disk, up to one block, and its size. Refuses what is
// not a readable regular file with a sentence of its own.
std::string read_start(const std::filesystem::path& path, std::uintmax_t& size) {
  const std::string source = path.string();
  std::error_code error;
  const auto status = std::filesystem::status(path, error);
  if (!std::filesystem::exists(status)) throw InputError(source, "the file does not exist");
  if (std::filesystem::is_directory(status)) throw InputError(source, "it is a folder, not a FITS file");
  // A FIFO, socket or device could block the reader for ever (a FIFO with no writer does).
  if (!std::filesystem::is_regular_file(status))
    throw InputError(source, "it is not a regular file (a FIFO, socket or device), so it is not read");
  size = std::filesystem::file_size(path, error);
  if (error) throw InputError(source, "its size cannot be read (" + error.message() + ")");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(source, "the file cannot be opened for reading (" + std::generic_category().message(errno) + ")");
  std::string head(kBlock, '\0');
  in.read(head.data(), static_cast<std::streamsize>(head.size()));
  head.resize(static_cast<std::size_t>(in.gcount()));
  return head;
}

ByteReader disk_reader(const std::filesystem::path& path) {
  return [path](long long offset, std::size_t count) {
    std::ifstream in(path, std::ios::binary);
    std::string bytes(count, '\0');
    in.seekg(offset);
    in.read(bytes.data(), static_cast<std::streamsize>(count));
    bytes.resize(in ? count : static_cast<std::size_t>(std::max<std::streamsize>(in.gcount(), 0)));
    return bytes;
  };
}

ByteReader memory_reader(std::span<const std::byte> bytes) {
  return [bytes](long long offset, std::size_t count) {
    if (offset < 0 || static_cast<std::size_t>(offset) >= bytes.size()) return std::string();
    const std::size_t n = std::min(count, bytes.size() - static_cast<std::size_t>(offset));
    return std::string(reinterpret_cast<const char*>(bytes.data()) + offset, n);
  };
}

// The bytes a disk file holds: cfitsio's count (public in fitsio.h), which for a
// gzip-compressed file is the size uncompressed.
long long disk_size(fitsfile* file) { return file->Fptr->logfilesize; }

FitsHandle open_disk(const std::filesystem::path& path) {
  const std::string source = path.string();
  std::uintmax_t size = 0;
  const std::string head = read_start(path, size);
  check_start(head, size, source);
  check_mandatory_cards(disk_reader(path), 0, 1, source);
  fitsfile* raw = nullptr;
  int status = 0;
  // The disk-file entry point: file names are taken literally, without cfitsio's
  // extended syntax (brackets, filters) that would misread some legal names.
  fits_open_diskfile(&raw, source.c_str(), READONLY, &status);
  if (status != 0) {
    if (raw) fits_detail::Closer{}(raw);
    fail(source, "it cannot be read as FITS", status);
  }
  return FitsHandle(raw);
}

bool is_gzip(const std::filesystem::path& path) {
  std::uintmax_t size = 0;
  const std::string head = read_start(path, size);
  check_start(head, size, path.string());
  return head.size() >= 2 && static_cast<unsigned char>(head[0]) == 0x1f && static_cast<unsigned char>(head[1]) == 0x8b;
}

bool is_gzip(std::span<const std::byte> bytes) {
  return bytes.size() >= 2 && bytes[0] == std::byte{0x1f} && bytes[1] == std::byte{0x8b};
}

struct PaddedBytes {
  std::unique_ptr<std::byte[]> data;  // not value-initialised: only the padding is zeroed
  std::size_t padded_size = 0;
  std::size_t capacity = 0;
};

// Buffers for files read whole go round from read to read, on whatever thread reads next
// (the chain reads each frame on a thread of its own; freed, a buffer would stay in the
// heap arena of the thread that freed it, one per arena). At most kKept are kept (a
// frame's size each, for the rest of the process): the chain has three reads in flight
// at most.
class ByteBuffers {
 public:
  PaddedBytes take(std::size_t padded_size) {
    {
      const std::lock_guard lock(mutex_);
      for (auto it = kept_.begin(); it != kept_.end(); ++it)
        if (it->capacity >= padded_size) {
          PaddedBytes bytes = std::move(*it);
          kept_.erase(it);
          bytes.padded_size = padded_size;
          return bytes;
        }
    }
    return PaddedBytes{std::unique_ptr<std::byte[]>(new std::byte[padded_size]), padded_size, padded_size};
  }
  void give(PaddedBytes bytes) {
    if (!bytes.data) return;
    const std::lock_guard lock(mutex_);
    if (kept_.size() < kKept) kept_.push_back(std::move(bytes));
  }

 private:
  static constexpr std::size_t kKept = 3;
  std::mutex mutex_;
  std::vector<PaddedBytes> kept_;
};
ByteBuffers& byte_buffers() {
  static ByteBuffers buffers;
  return buffers;
}

// A file's bytes, read whole: `size` bytes (fewer if the file shrank meanwhile; `size`
// then says how many) followed by zeros up to whole 2880-byte blocks, the form cfitsio's
// memory driver takes. False when the file cannot be read so (the disk reader then says
// why, in its words).
bool read_whole(const std::filesystem::path& path, std::size_t& size, PaddedBytes& padded) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return false;
  padded = byte_buffers().take((size + kBlock - 1) / kBlock * kBlock);
  std::size_t got = 0;
  bool ok = true;
  while (got < size) {
    const ssize_t n = ::read(fd, padded.data.get() + got, size - got);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) {
      ok = n == 0;  // 0: the end came early (the file shrank): what there is is read
      break;
    }
    got += static_cast<std::size_t>(n);
  }
  ::close(fd);
  size = got;
  std::fill(padded.data.get() + got, padded.data.get() + padded.padded_size, std::byte{0});
  return ok;
}

// The image in `padded` (read_whole's form: `size` bytes, then zeros to `padded_size`,
// whole blocks), read as read_fits_memory reads bytes. cfitsio takes the buffer as writable and may
// reallocate it, so it is the caller's own copy, alive until the file is closed here.
FitsImage read_padded(std::byte* padded, std::size_t padded_size, std::size_t size, const std::string& name,
                      cv::Mat reuse = {}) {
  const std::span<const std::byte> bytes(padded, size);
  check_mandatory_cards(memory_reader(bytes), 0, 1, name);
  void* buffer = padded;
  std::size_t buffer_size = padded_size;
  fitsfile* raw = nullptr;
  int status = 0;
  fits_open_memfile(&raw, name.c_str(), READONLY, &buffer, &buffer_size, 0, nullptr, &status);
  if (status != 0) {
    if (raw) fits_detail::Closer{}(raw);
    fail(name, "it cannot be read as FITS", status);
  }
  FitsHandle file(raw);
  return read_open(file.get(), static_cast<long long>(size), memory_reader(bytes), name, std::move(reuse));
}

// Files up to this size are read whole into memory and decoded from there (read_fits).
constexpr std::uintmax_t kReadWholeBytes = std::uintmax_t{64} << 20;

// The bytes a gzip file held: FITS, never gzip again (one level of compression is what
// the bound in fits_gzip.cpp is about).
FitsImage read_gunzipped(const std::vector<std::byte>& plain, const std::string& name) {
  if (is_gzip(std::span<const std::byte>(plain))) throw InputError(name, "it is gzip-compressed twice; occulta uncompresses FITS files once");
  return read_fits_memory(plain, name);
}

}  // namespace

FitsImage read_fits(const std::filesystem::path& path) { return read_fits(path, cv::Mat()); }

FitsImage read_fits(const std::filesystem::path& path, cv::Mat reuse) {
  std::uintmax_t size = 0;
  const std::string head = read_start(path, size);
  check_start(head, size, path.string());
  // A gzip-compressed file is uncompressed here under a bound, not by cfitsio (fits_gzip.cpp).
  if (is_gzip(std::span(reinterpret_cast<const std::byte*>(head.data()), head.size()))) {
    const std::unique_ptr<std::FILE, int (*)(std::FILE*)> file(std::fopen(path.c_str(), "rb"), std::fclose);
    if (!file) throw InputError(path.string(), "the file cannot be opened for reading");
    return read_gunzipped(fits_detail::gunzip_fits(file.get(), path.string()), path.string());
  }
  // Read whole, with one read(2), and decoded from memory: through cfitsio's disk driver
  // a 1024² Rice frame of 0.9 MB took ~230 reads of 4 KiB to read its tiles, as many
  // again to verify its checksums, and ~7 opens for the header checks (maps_bench,
  // strace); from memory the same steps read the same bytes with no system call. The
  // checks and their sentences are those of read_fits_memory, which the fuzz and hostile
  // tests hold to the disk reader's. A file too large for that is read from the disk.
  if (size <= kReadWholeBytes) {
    std::size_t whole = static_cast<std::size_t>(size);
    PaddedBytes padded;
    const bool read = read_whole(path, whole, padded);
    // Back into the round however the read ends (a refused file throws).
    const std::unique_ptr<PaddedBytes, void (*)(PaddedBytes*)> give_back(
        &padded, [](PaddedBytes* bytes) { byte_buffers().give(std::move(*bytes)); });
    if (read) {
      check_start(std::string_view(reinterpret_cast<const char*>(padded.data.get()), std::min(whole, kBlock)), whole,
                  path.string());
      return read_padded(padded.data.get(), padded.padded_size, whole, path.string(), std::move(reuse));
    }
  }
  FitsHandle file = open_disk(path);
  return read_open(file.get(), disk_size(file.get()), disk_reader(path), path.string(), std::move(reuse));
}

Header read_fits_header(const std::filesystem::path& path) {
  if (is_gzip(path)) return read_fits(path).header;
  FitsHandle file = open_disk(path);
  const Choice choice = choose_image(file.get(), disk_size(file.get()), disk_reader(path), path.string());
  return read_header(file.get(), choice, path.string());
}

FitsImage read_fits_memory(std::span<const std::byte> bytes, std::string name) {
  if (is_gzip(bytes)) {
    // gzip-compressed (RFC 1952): uncompressed under a bound (fits_gzip.cpp), once.
    const std::unique_ptr<std::FILE, int (*)(std::FILE*)> file(
        fmemopen(const_cast<std::byte*>(bytes.data()), bytes.size(), "rb"), std::fclose);
    if (!file) throw InputError(name, "its gzip-compressed bytes cannot be opened");
    return read_gunzipped(fits_detail::gunzip_fits(file.get(), name), name);
  }
  check_start(std::string_view(reinterpret_cast<const char*>(bytes.data()), std::min(bytes.size(), kBlock)),
              bytes.size(), name);
  // cfitsio takes the buffer as writable and may reallocate it: it gets a private copy.
  // cfitsio's memory driver treats the buffer as whole 2880-byte blocks, so the copy is
  // padded with zeros to the next block; the truncation checks use the true size.
  std::vector<std::byte> copy((bytes.size() + kBlock - 1) / kBlock * kBlock, std::byte{0});
  std::copy(bytes.begin(), bytes.end(), copy.begin());
  return read_padded(copy.data(), copy.size(), bytes.size(), name);
}

}  // namespace occulta::imaging
