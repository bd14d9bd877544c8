// imaging/fits.hpp — FITS frames in and out (cfitsio).
//
// Reads the first image HDU that holds data — primary or extension, tile-compressed
// included — for BITPIX 8, 16, 32, 64, −32, −64, applying BSCALE/BZERO and BLANK
// (FITS Standard 4.0, §4.4.2 and §5.3), into a float32 cv::Mat with NaN where there is
// no data. A 3-D cube with one plane is accepted; more planes are refused.
//
// Pixel convention (FITS Standard 4.0 §8.1 / WCS Paper I): FITS pixel (i, j), 1-based,
// is our 0-based pixel (x, y) = (i − 1, j − 1), the centre of the pixel. In the cv::Mat,
// column x is FITS axis 1 and row y is FITS axis 2, so row 0 is the first row stored in
// the file — the bottom of the image as solar images are conventionally displayed.
// Anything that draws a Mat for a person flips it vertically.
//
// Every failure is an InputError naming the file and the fault in one sentence.
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <functional>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include <opencv2/core.hpp>

namespace occulta::imaging {

// One header record ("card") with its value typed as FITS writes it.
struct HeaderCard {
  enum class Kind { Logical, Integer, Real, Text, Commentary, Undefined };
  std::string key;       // upper case, e.g. "DATE-OBS"; COMMENT/HISTORY/"" for commentary
  Kind kind = Kind::Undefined;
  long long integer = 0; // Kind::Integer (also 0/1 for Logical)
  double real = 0.0;     // Kind::Real, and Kind::Integer converted
  std::string text;      // Kind::Text value without quotes; Commentary text
  std::string comment;
};

// The keywords of one image, in file order. When the image sits in an extension, the
// primary header's keywords that the extension lacks are inherited (structural keywords
// such as SIMPLE, BITPIX, NAXISn, EXTEND excepted) — common practice for INHERIT = T
// and what solar archives rely on.
struct Header {
  std::vector<HeaderCard> cards;

  const HeaderCard* find(std::string_view key) const;     // first card with that key
  std::optional<double> number(std::string_view key) const;  // Integer or Real cards only
  std::optional<std::string> text(std::string_view key) const;  // Text cards only

  // Replace the first card with this key, or append one.
  void set_real(std::string_view key, double value, std::string_view comment = "");
  void set_integer(std::string_view key, long long value, std::string_view comment = "");
  void set_text(std::string_view key, std::string_view value, std::string_view comment = "");
  void set_logical(std::string_view key, bool value, std::string_view comment = "");
  void add_commentary(std::string_view key, std::string_view text);  // COMMENT / HISTORY
};

struct FitsImage {
  std::string source;      // path (or name for in-memory data), used in messages
  int hdu = 0;             // 0-based index of the HDU that held the image (0 = primary)
  int bitpix = 0;          // as stored: BITPIX, or ZBITPIX for a tile-compressed image
  bool compressed = false; // tile-compressed image extension
  Header header;           // the image's header (with inherited primary keywords)
  cv::Mat pixels;          // CV_32FC1, rows = NAXIS2, cols = NAXIS1, NaN where no data
  std::size_t nonfinite_count = 0;  // pixels that are NaN/Inf after scaling (blank or stored so)
};

// Largest image we agree to allocate: refuses NAXISn products beyond this before any
// allocation (a header can claim anything).
inline constexpr std::size_t kMaxPixels = std::size_t{1} << 28;  // 268 M pixels, 1 GiB float32

// What a reader does when the image's HDU has CHECKSUM or DATASUM (FITS Standard 4.0
// §4.4.2.7) and its bytes do not match: refuse the file (the default: a damaged tile
// decodes to wrong pixels without any other sign), or pass one sentence to `warn` and
// read it. Process-wide, set once from the command line before any file is read; an
// empty `warn` keeps the current sink (standard error).
enum class ChecksumPolicy { Refuse, Warn };
void set_checksum_policy(ChecksumPolicy policy, std::function<void(const std::string&)> warn = {});

FitsImage read_fits(const std::filesystem::path& path);
// The same, writing the pixels into `reuse` when it is CV_32FC1 of the image's size and
// holds the only reference to its buffer (else a new one is made): a caller streaming
// frames of one size hands back a finished frame's buffer and so spares a fresh 4 MB
// allocation, and the kernel's page faults on it, per 1024² frame.
FitsImage read_fits(const std::filesystem::path& path, cv::Mat reuse);

// The same, from bytes already in memory (used by the fuzzer and for files read whole).
FitsImage read_fits_memory(std::span<const std::byte> bytes, std::string name);

// Header only, without reading pixels (for quick listings). Same HDU choice as read_fits.
Header read_fits_header(const std::filesystem::path& path);

struct FitsWriteOptions {
  enum class Pixels { Float32, ScaledInt16 };
  Pixels pixels = Pixels::Float32;
  // ScaledInt16: BSCALE/BZERO chosen from the finite data range so it spans the int16
  // range; NaN is written as BLANK. Round trip is exact up to BSCALE/2.
  bool rice = false;  // Rice tile compression (one row per tile), in an image extension
};

// Writes pixels (CV_32FC1, row 0 = FITS row 1) with the given header's non-structural
// cards. The file appears whole or not at all (written beside it, then renamed).
void write_fits(const std::filesystem::path& path, const cv::Mat& pixels, const Header& header,
                const FitsWriteOptions& options = {});

// One column of a binary-table extension: numbers (TFORM D) or texts (TFORM nA), one
// value per row.
struct FitsTableColumn {
  std::string name;                // TTYPEn
  std::string unit;                // TUNITn ("" for none)
  std::vector<double> numbers;     // either numbers …
  std::vector<std::string> texts;  // … or texts (fixed width: the longest)
};

// A cube of equal-size CV_32FC1 planes (NAXIS1 = cols, NAXIS2 = rows, NAXIS3 = plane),
// float32, with the header's non-structural cards, then — when columns are given — a
// binary-table extension EXTNAME = table_name with one row per plane. Written whole or
// not at all, like write_fits.
void write_fits_cube(const std::filesystem::path& path, const std::vector<cv::Mat>& planes, const Header& header,
                     const std::string& table_name = "", const std::vector<FitsTableColumn>& columns = {});

// The same cube written plane by plane as the planes come, so that a caller holds one
// plane, not the cube. The image is created with room for max_planes (NAXIS3 must be in
// the header before the data); finish() sets NAXIS3 to the planes added — cfitsio's
// fits_resize_img drops the unused planes at the end of the data — writes the checksums
// (DATASUM summed as the planes come, not read back: the same cards fits_write_chksum writes)
// and the table (one row per plane added), and renames the file into place. Until then
// the file is a hidden temporary (output_file.hpp); a writer destroyed before finish()
// removes it. The file equals write_fits_cube's of the same planes, DATE and CHECKSUM
// apart. Errors: InputError naming `path`.
class FitsCubeWriter {
 public:
  FitsCubeWriter(const std::filesystem::path& path, cv::Size plane_size, long max_planes, const Header& header);
  ~FitsCubeWriter();
  FitsCubeWriter(const FitsCubeWriter&) = delete;
  FitsCubeWriter& operator=(const FitsCubeWriter&) = delete;

  void add(const cv::Mat& plane);  // CV_32FC1 of plane_size; at most max_planes of them
  long planes() const;             // added so far
  cv::Mat plane(long k) const;     // plane k < planes(), read back from the file as written
  // After this no plane may be added, and plane() reads the planes added so far straight
  // from the file's bytes through a descriptor of its own: safe on one thread while
  // finish() runs on another, and after it. False when the file could not be opened a
  // second time: then plane() reads through cfitsio, not beside finish().
  bool freeze_planes();
  void finish(const std::string& table_name = "", const std::vector<FitsTableColumn>& columns = {});

 private:
  struct State;
  std::unique_ptr<State> state_;
};

}  // namespace occulta::imaging
