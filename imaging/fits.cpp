// imaging/fits.cpp — reading FITS images with cfitsio: choose the image HDU, check what
// its header claims against the bytes there are, then read header and pixels.
#include "imaging/fits.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstring>
#include <fstream>
#include <limits>
#include <system_error>

#include "imaging/fits_cfitsio.hpp"
#include "imaging/input_error.hpp"

namespace occulta::imaging {

namespace {

using fits_detail::FitsHandle;

constexpr std::size_t kBlock = 2880;  // FITS Standard 4.0 §3.1: files are 2880-byte blocks

// What can be said from the first bytes alone, before cfitsio sees them.
void check_start(std::string_view head, std::uintmax_t size, const std::string& source) {
  if (size == 0) throw InputError(source, "the file is empty (0 bytes), so it holds no FITS image");
  // gzip-compressed FITS (a whole file compressed, not the tiled convention): cfitsio
  // uncompresses disk files of this kind itself.
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

// The image HDU occulta reads (FITS Standard 4.0 §3.3 primary array, §7.1 IMAGE
// extension, tiled convention Pence et al. 2009): the first one whose axes hold data.
// Refuses what it cannot read before anything is allocated, and leaves `file` there.
// `file_size` is the number of bytes the file really has.
Choice choose_image(fitsfile* file, long long file_size, const std::string& source) {
  std::string skipped;  // what came before, for a message when there is no image
  bool saw_table = false;
  for (int index = 0;; ++index) {
    int status = 0;
    if (index > 0) {
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
    } else {
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

FitsImage read_open(fitsfile* file, long long file_size, const std::string& source) {
  const Choice choice = choose_image(file, file_size, source);
  FitsImage image;
  image.source = source;
  image.hdu = choice.hdu;
  image.bitpix = choice.bitpix;
  image.compressed = choice.compressed;
  image.header = read_header(file, choice, source);

  image.pixels.create(static_cast<int>(choice.height), static_cast<int>(choice.width), CV_32FC1);
  // cfitsio applies BSCALE/BZERO (§4.4.2.5: physical = BZERO + BSCALE × stored) and turns
  // integers equal to BLANK (§4.4.2.5) into the null value given, NaN. Uncompressed
  // floats are read with no null value, so NaN and ±Inf arrive as stored (§5.3).
  float nan = std::numeric_limits<float>::quiet_NaN();
  const bool stored_float = choice.bitpix < 0 && !choice.compressed;
  int any_null = 0, status = 0;
  fits_read_img(file, TFLOAT, 1, static_cast<LONGLONG>(image.pixels.total()), stored_float ? nullptr : &nan,
                image.pixels.ptr<float>(), &any_null, &status);
  if (status != 0) fail(source, "its pixels cannot be read", status);
  const float* pixel = image.pixels.ptr<float>();
  for (std::size_t i = 0, n = image.pixels.total(); i < n; ++i)
    if (!std::isfinite(pixel[i])) ++image.nonfinite_count;
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
  size = std::filesystem::file_size(path, error);
  if (error) throw InputError(source, "its size cannot be read (" + error.message() + ")");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(source, "the file cannot be opened for reading (" + std::generic_category().message(errno) + ")");
  std::string head(kBlock, '\0');
  in.read(head.data(), static_cast<std::streamsize>(head.size()));
  head.resize(static_cast<std::size_t>(in.gcount()));
  return head;
}

// The bytes a disk file holds: cfitsio's count (public in fitsio.h), which for a
// gzip-compressed file is the size uncompressed.
long long disk_size(fitsfile* file) { return file->Fptr->logfilesize; }

FitsHandle open_disk(const std::filesystem::path& path) {
  const std::string source = path.string();
  std::uintmax_t size = 0;
  const std::string head = read_start(path, size);
  check_start(head, size, source);
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

}  // namespace

FitsImage read_fits(const std::filesystem::path& path) {
  FitsHandle file = open_disk(path);
  return read_open(file.get(), disk_size(file.get()), path.string());
}

Header read_fits_header(const std::filesystem::path& path) {
  FitsHandle file = open_disk(path);
  const Choice choice = choose_image(file.get(), disk_size(file.get()), path.string());
  return read_header(file.get(), choice, path.string());
}

FitsImage read_fits_memory(std::span<const std::byte> bytes, std::string name) {
  check_start(std::string_view(reinterpret_cast<const char*>(bytes.data()), std::min(bytes.size(), kBlock)),
              bytes.size(), name);
  // cfitsio takes the buffer as writable and may reallocate it: it gets a private copy,
  // which lives until the file is closed (declared before the handle). cfitsio's memory
  // driver treats the buffer as whole 2880-byte blocks, so the copy is padded with zeros
  // to the next block; the truncation checks use the true size.
  std::vector<std::byte> copy((bytes.size() + kBlock - 1) / kBlock * kBlock, std::byte{0});
  std::copy(bytes.begin(), bytes.end(), copy.begin());
  void* buffer = copy.data();
  std::size_t buffer_size = copy.size();
  fitsfile* raw = nullptr;
  int status = 0;
  fits_open_memfile(&raw, name.c_str(), READONLY, &buffer, &buffer_size, 0, nullptr, &status);
  if (status != 0) {
    if (raw) fits_detail::Closer{}(raw);
    fail(name, "it cannot be read as FITS", status);
  }
  FitsHandle file(raw);
  return read_open(file.get(), static_cast<long long>(bytes.size()), name);
}

}  // namespace occulta::imaging
