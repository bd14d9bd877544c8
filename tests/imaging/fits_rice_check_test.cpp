// tests/imaging/fits_rice_check_test.cpp — imaging/fits_rice_check: the trace of Rice
// tiles accepts every tile that cfitsio, occulta and astropy write, ends exactly where
// each stored stream ends, and refuses damaged tiles (the fits_fuzz reproducer among
// them) with one sentence before cfitsio's decoder reads past them.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <fstream>
#include <iterator>
#include <string>
#include <vector>

#include <fitsio.h>

#include "imaging/fits.hpp"
#include "imaging/fits_cfitsio.hpp"
#include "imaging/fits_rice_check.hpp"
#include "imaging/input_error.hpp"
#include "tests/support/support.hpp"

namespace fs = std::filesystem;
using occulta::imaging::FitsImage;
using occulta::imaging::FitsWriteOptions;
using occulta::imaging::Header;
using occulta::imaging::InputError;
using occulta::imaging::read_fits;
using occulta::imaging::read_fits_memory;
using occulta::imaging::write_fits;
using occulta::imaging::fits_detail::check_compressed_tiles;
using occulta::imaging::fits_detail::TileCheck;
using occulta::imaging::fits_detail::trace_rice;
using occulta::test::run_python;
using occulta::test::slurp;
using occulta::test::spit;
using occulta::test::scratch_dir;
using occulta::test::shell_quote;

namespace {


// Where a compressed image's tiles lie in its file: the data start of HDU 2, the heap
// start (FITS Standard 4.0 §7.3.5), and each tile's (length, offset) in the heap.
struct Layout {
  long long data_start = 0, heap_start = 0;
  std::vector<std::pair<long long, long long>> tiles;
  std::vector<TileCheck> checks;  // what check_compressed_tiles() returned
};

Layout layout_of(const fs::path& path, bool check = true) {
  fitsfile* file = nullptr;
  int status = 0;
  fits_open_diskfile(&file, path.c_str(), READONLY, &status);
  fits_movabs_hdu(file, 2, nullptr, &status);
  REQUIRE(status == 0);
  Layout layout;
  LONGLONG header_start = 0, data_start = 0, data_end = 0;
  fits_get_hduaddrll(file, &header_start, &data_start, &data_end, &status);
  LONGLONG rows = 0;
  fits_get_num_rowsll(file, &rows, &status);
  long row_bytes = 0;
  fits_read_key(file, TLONG, "NAXIS1", &row_bytes, nullptr, &status);
  layout.data_start = data_start;
  layout.heap_start = data_start + row_bytes * rows;  // THEAP default; cfitsio writes none
  for (long long row = 1; row <= rows; ++row) {
    LONGLONG length = 0, offset = 0;
    fits_read_descriptll(file, 1, row, &length, &offset, &status);
    layout.tiles.emplace_back(length, offset);
  }
  REQUIRE(status == 0);
  try {
    if (check) layout.checks = check_compressed_tiles(file, path.string(), "its image in HDU 2");
  } catch (...) {
    fits_close_file(file, &status);
    throw;
  }
  fits_close_file(file, &status);
  return layout;
}

// Every tile traced, each Rice stream ending on its stored length — the end-of-stream
// byte count of the trace against what the writer stored. Tiles stored another way
// (GZIP_COMPRESSED_DATA: COMPRESSED_DATA empty) are not traced; `expected_rice` counts
// those that are Rice-coded.
void check_all_tiles(const fs::path& path, long long expected_tiles, long long expected_pixels,
                     long long expected_rice) {
  CAPTURE(path);
  const Layout layout = layout_of(path);
  CHECK(static_cast<long long>(layout.checks.size()) == expected_tiles);
  long long pixels = 0, rice = 0;
  for (std::size_t i = 0; i < layout.checks.size(); ++i) {
    CAPTURE(i);
    const TileCheck& tile = layout.checks[i];
    CHECK(tile.stored_bytes == layout.tiles[i].first);
    CHECK(tile.traced_bytes == (tile.stored_bytes > 0 ? tile.stored_bytes : -1));
    pixels += tile.pixels;
    rice += tile.stored_bytes > 0;
  }
  CHECK(pixels == expected_pixels);
  CHECK(rice == expected_rice);
}

// A Rice image written by cfitsio itself, with tiles of tile_x × tile_y (edge tiles cut
// short when they do not divide the image): smooth values, a constant patch (low-entropy
// blocks), full-range noise (high-entropy blocks) and moderate noise (coded blocks).
void write_tiled(const fs::path& path, int bitpix, int width, int height, long tile_x, long tile_y,
                 int compression = RICE_1) {
  fs::remove(path);
  fitsfile* file = nullptr;
  int status = 0;
  fits_create_diskfile(&file, path.c_str(), &status);
  fits_create_img(file, BYTE_IMG, 0, nullptr, &status);
  long tile[2] = {tile_x, tile_y};
  fits_set_compression_type(file, compression, &status);
  fits_set_tile_dim(file, 2, tile, &status);
  long axes[2] = {width, height};
  fits_create_img(file, bitpix, 2, axes, &status);
  // PLIO_1 codes non-negative integers below 2^24 only (cfitsio refuses others).
  const bool plio = compression == PLIO_1;
  const double range = plio ? 1000.0 : bitpix == BYTE_IMG ? 255.0 : bitpix == SHORT_IMG ? 65535.0 : 4.0e9;  // within int32
  const double low = plio || bitpix == BYTE_IMG ? 0.0 : -range / 2;
  std::vector<int> values(static_cast<std::size_t>(width) * height);
  std::uint64_t seed = 88172645463325252ull;  // xorshift64: reproducible noise
  auto noise = [&] {
    seed ^= seed << 13, seed ^= seed >> 7, seed ^= seed << 17;
    return static_cast<double>(seed % 1000003) / 1000003.0;
  };
  for (int y = 0; y < height; ++y)
    for (int x = 0; x < width; ++x) {
      double v = low + range * (0.3 + 0.2 * std::sin(0.05 * x + 0.11 * y));
      if (x < width / 4) v = low + 17.0;                                       // constant
      else if (y % 7 == 3) v = low + range * noise();                          // full range
      else v += range * 0.01 * (noise() - 0.5);                                // mild noise
      values[static_cast<std::size_t>(y) * width + x] = static_cast<int>(std::round(std::clamp(v, low, low + range)));
    }
  // cfitsio writes compressed images only from arrays of the image's own type.
  const auto count = static_cast<LONGLONG>(values.size());
  if (bitpix == BYTE_IMG) {
    std::vector<unsigned char> typed(values.begin(), values.end());
    fits_write_img(file, TBYTE, 1, count, typed.data(), &status);
  } else if (bitpix == SHORT_IMG) {
    std::vector<short> typed(values.begin(), values.end());
    fits_write_img(file, TSHORT, 1, count, typed.data(), &status);
  } else {
    fits_write_img(file, TINT, 1, count, values.data(), &status);
  }
  fits_close_file(file, &status);
  char message[FLEN_ERRMSG] = "";
  std::string messages;
  while (fits_read_errmsg(message)) messages += std::string(message) + "; ";
  REQUIRE_MESSAGE(status == 0, messages);
}

// An int16 Rice frame as occulta writes it (one row per tile).
fs::path write_ours(const fs::path& dir, const std::string& name, int width, int height) {
  cv::Mat pixels(height, width, CV_32FC1);
  for (int y = 0; y < height; ++y)
    for (int x = 0; x < width; ++x)
      pixels.at<float>(y, x) = static_cast<float>(100.0 + 20.0 * std::sin(0.3 * x + 0.7 * y) + (x * 7919 + y * 104729) % 13);
  const fs::path path = dir / name;
  write_fits(path, pixels, Header{}, FitsWriteOptions{FitsWriteOptions::Pixels::ScaledInt16, true});
  return path;
}

// The refusal sentence for a damaged file, from disk and from memory. The files carry
// checksums, which would refuse them first: here the checksum policy only warns, so that
// the tile trace is what refuses them (the other guard, on its own).
void check_damaged(const fs::path& path, const std::string& phrase) {
  CAPTURE(path);
  struct WarnOnly {
    WarnOnly() { occulta::imaging::set_checksum_policy(occulta::imaging::ChecksumPolicy::Warn, [](const std::string&) {}); }
    ~WarnOnly() { occulta::imaging::set_checksum_policy(occulta::imaging::ChecksumPolicy::Refuse); }
  } warn_only;
  for (const bool memory : {false, true}) {
    CAPTURE(memory);
    try {
      if (memory) {
        const std::string bytes = slurp(path);
        read_fits_memory(std::as_bytes(std::span(bytes.data(), bytes.size())), path.string());
      } else {
        read_fits(path);
      }
      FAIL("a damaged tile was read");
    } catch (const InputError& error) {
      const std::string message = error.what();
      CAPTURE(message);
      CHECK(message.rfind(path.string() + ": ", 0) == 0);
      CHECK(message.find(phrase) != std::string::npos);
      CHECK(message.find('\n') == std::string::npos);
    }
  }
}

std::vector<unsigned char> stream(std::initializer_list<int> bytes) {
  return std::vector<unsigned char>(bytes.begin(), bytes.end());
}

}  // namespace

TEST_CASE("fits_rice_check: hand-coded streams by the coding's definition") {
  // Pence, Seaman & White (2009): first value raw, then per block a code of 3/4/5 bits
  // holding fs + 1 (8/16/32-bit data), bits most significant first.
  // 16-bit, code 0000 (fs = −1, low entropy): 3 pixels in 4 bits → 2 + 1 bytes.
  auto t = trace_rice(stream({0x12, 0x34, 0x00}), 3, 32, 2);
  CHECK(t.problem.empty());
  CHECK(t.bytes_used == 3);
  CHECK(trace_rice(stream({0x12, 0x34}), 3, 32, 2).problem.find("run past the end of its 2 bytes") != std::string::npos);
  // 8-bit, code 111 (fs = 6 = fsmax, high entropy): 2 raw values of 8 bits, 3 + 16 bits.
  t = trace_rice(stream({0xAA, 0xFF, 0xFF, 0xE0}), 2, 32, 1);
  CHECK(t.problem.empty());
  CHECK(t.bytes_used == 4);
  CHECK(!trace_rice(stream({0xAA, 0xFF, 0xFF}), 2, 32, 1).problem.empty());
  // 16-bit, code 0001 (fs = 0): each difference 0 as the unary code "1", 4 pixels in 8 bits.
  t = trace_rice(stream({0x00, 0x01, 0x1F}), 4, 32, 2);
  CHECK(t.problem.empty());
  CHECK(t.bytes_used == 3);
  // Two blocks of 2: code 0001 + "11", then code 0000 (low entropy): 10 bits → 2 bytes.
  t = trace_rice(stream({0x00, 0x01, 0x1C, 0x00}), 4, 2, 2);
  CHECK(t.problem.empty());
  CHECK(t.bytes_used == 4);
  // fs = 1 (code 0010) followed by zeros to the end: the unary code of the first
  // difference never ends — the fits_fuzz crash, where cfitsio read on past the tile.
  std::vector<unsigned char> zeros(40, 0);
  zeros[2] = 0x20;
  t = trace_rice(zeros, 16, 32, 2);
  CHECK(t.problem == "its codes run past the end of its 40 bytes at pixel 1 of 16");
  // 8-bit, fs = 0 (code 001) then 317 zero bits: a difference wider than 8 bits.
  std::vector<unsigned char> wide(41, 0);
  wide[1] = 0x20;
  CHECK(trace_rice(wide, 4, 32, 1).problem == "pixel 1 has a difference wider than the 8 bits of its data");
  // 32-bit, code 11100 = 28 (fs = 27 > fsmax 25): no encoder writes it.
  CHECK(trace_rice(stream({0, 0, 0, 0, 0xE0, 0, 0, 0}), 1, 32, 4).problem.find("asks for 27 low bits") !=
        std::string::npos);
  CHECK(trace_rice(stream({0x01}), 1, 32, 2).problem == "it has 1 byte, fewer than the 2 of its first value");
}

TEST_CASE("fits_rice_check: every tile cfitsio, occulta and astropy write is accepted, ending on its stored length") {
  const fs::path dir = scratch_dir("fits-rice-check-good");
  // cfitsio: 8-, 16- and 32-bit data, rows and 2-D tiles whose edges are cut short.
  const struct {
    int bitpix;
    long tile_x, tile_y;
    long long tiles;
  } cases[] = {{BYTE_IMG, 77, 1, 45}, {SHORT_IMG, 77, 1, 45}, {LONG_IMG, 77, 1, 45},
               {BYTE_IMG, 16, 16, 5 * 3}, {SHORT_IMG, 16, 16, 5 * 3}, {LONG_IMG, 30, 20, 3 * 3}};
  int n = 0;
  for (const auto& c : cases) {
    const fs::path path = dir / ("cfitsio_" + std::to_string(n++) + ".fits");
    write_tiled(path, c.bitpix, 77, 45, c.tile_x, c.tile_y);
    check_all_tiles(path, c.tiles, 77 * 45, c.tiles);
    CHECK(read_fits(path).pixels.cols == 77);
  }
  // occulta's writer: scaled int16 and quantised float32, one row per tile.
  check_all_tiles(write_ours(dir, "ours_int16.fits", 300, 40), 40, 300 * 40, 40);
  cv::Mat floats(30, 50, CV_32FC1);
  cv::randn(floats, 100.0, 5.0);
  write_fits(dir / "ours_float32.fits", floats, Header{}, FitsWriteOptions{FitsWriteOptions::Pixels::Float32, true});
  check_all_tiles(dir / "ours_float32.fits", 30, 30 * 50, 30);
  // astropy.io.fits (Debian's python3-astropy; its own copy of the coder), int16 and
  // quantised float32 (tests/external/write_fits.py).
  const fs::path astropy = dir / "astropy";
  const auto result = run_python("tests/external/write_fits.py", shell_quote(astropy.string()));
  REQUIRE_MESSAGE(result.exit_code == 0, result.output);
  check_all_tiles(astropy / "rice_int16.fits", 4, 6 * 4, 4);
  // Its float tiles of 6 pixels are too few to quantise, so astropy stores them losslessly
  // in GZIP_COMPRESSED_DATA: the path where the check looks for another column.
  check_all_tiles(astropy / "rice_float32.fits", 4, 6 * 4, 0);
}

TEST_CASE("fits_rice_check: damaged Rice tiles are refused before cfitsio decodes them") {
  const fs::path dir = scratch_dir("fits-rice-check-damaged");
  const fs::path good = write_ours(dir, "good.fits", 64, 12);
  const Layout layout = layout_of(good);
  const std::string bytes = slurp(good);
  const auto [length, offset] = layout.tiles[5];  // tile 6
  const std::size_t at = static_cast<std::size_t>(layout.heap_start + offset);

  // The pattern of the fits_fuzz crash: a unary code running into zero bytes to the end
  // of the tile (cfitsio 4.2 read on past its buffer and crashed).
  std::string zeros = bytes;
  zeros[at + 2] = '\x20';  // after the 2-byte first value: code 0010, fs = 1
  for (long long i = 3; i < length; ++i) zeros[at + static_cast<std::size_t>(i)] = '\0';
  spit(dir / "zero_run.fits", zeros);
  check_damaged(dir / "zero_run.fits", "tile 6 of the Rice-compressed image is damaged: its codes run past the end of its");

  // One byte inserted inside the heap (as the fuzzer's InsertByte did): tile 6 loses its
  // last byte to tile 7, which its codes still need.
  std::string inserted = bytes;
  inserted.insert(at + 3, 1, '\0');
  spit(dir / "inserted.fits", inserted);
  check_damaged(dir / "inserted.fits", "tile 6 of the Rice-compressed image is damaged");

  // A tile with no bytes, and no other column to take it from.
  std::string empty = bytes;
  const std::size_t descriptor = static_cast<std::size_t>(layout.data_start) + 5 * 8;  // 1PB: length, offset
  empty.replace(descriptor, 4, std::string(4, '\0'));
  spit(dir / "empty_tile.fits", empty);
  check_damaged(dir / "empty_tile.fits", "tile 6 of its image in HDU 2 holds no data in any column");
  // The unchanged file still reads.
  CHECK(read_fits(good).pixels.rows == 12);
}

TEST_CASE("fits_rice_check: the fits_fuzz reproducer, a byte inserted in a Rice frame's header, is refused") {
  // The reproducer was the fuzz seed of a Rice-compressed scaled-int16 frame (16 × 12,
  // tests/fuzz/fits_fuzz_seeds.cpp) with one byte inserted in the CDELT2 card: every byte
  // after it moves by one, the tile descriptors read wrong and a tile's Rice stream
  // becomes garbage that sent cfitsio's decoder past its buffer.
  const fs::path dir = scratch_dir("fits-rice-check-reproducer");
  cv::Mat pixels(12, 16, CV_32FC1);
  for (int y = 0; y < pixels.rows; ++y)
    for (int x = 0; x < pixels.cols; ++x) pixels.at<float>(y, x) = static_cast<float>(100.0 + 7.0 * std::sin(x + 2.0 * y));
  pixels.at<float>(3, 5) = NAN;
  Header header;
  header.set_real("CDELT1", 60.0);
  header.set_real("CDELT2", 60.0);
  header.set_real("CROTA2", 3.0);
  const fs::path seed = dir / "seed.fits";
  write_fits(seed, pixels, header, FitsWriteOptions{FitsWriteOptions::Pixels::ScaledInt16, true});
  std::string bytes = slurp(seed);
  const std::size_t card = bytes.find("CDELT2  =");
  REQUIRE(card != std::string::npos);
  bytes.insert(card + 22, 1, '!');
  spit(dir / "inserted.fits", bytes);
  CHECK_THROWS_AS(read_fits(dir / "inserted.fits"), InputError);
  CHECK_THROWS_AS(read_fits_memory(std::as_bytes(std::span(bytes.data(), bytes.size())), "inserted"), InputError);
}

TEST_CASE("fits_rice_check: HCOMPRESS_1 and PLIO_1 images are refused with one sentence") {
  // cfitsio decodes both by hand-written code that trusts the bytes, as its Rice decoder
  // does; occulta reads RICE_1, GZIP_1 and GZIP_2 tiles only.
  const fs::path dir = scratch_dir("fits-rice-check-refused");
  for (const auto& [type, name] : {std::pair{HCOMPRESS_1, "HCOMPRESS_1"}, std::pair{PLIO_1, "PLIO_1"}}) {
    const fs::path path = dir / (std::string(name) + ".fits");
    write_tiled(path, SHORT_IMG, 64, 32, 64, 16, type);
    CAPTURE(path);
    try {
      read_fits(path);
      FAIL("read an image occulta does not read");
    } catch (const InputError& error) {
      CHECK(std::string(error.what()) == path.string() + ": its image in HDU 2 is tile-compressed with " + name +
                                             ", which occulta does not read (it reads RICE_1, GZIP_1 and GZIP_2 tiles).");
    }
  }
  // Whole GZIP tiles pass the check (it inflates them, bounded by their pixels).
  write_tiled(dir / "gzip2.fits", SHORT_IMG, 64, 32, 64, 16, GZIP_2);
  CHECK(read_fits(dir / "gzip2.fits").pixels.rows == 32);
}

namespace {

// The image as cfitsio's own decoder gives it: fits_read_img as float, NaN for blanks.
cv::Mat cfitsio_pixels(const fs::path& path) {
  fitsfile* file = nullptr;
  int status = 0, any_null = 0;
  fits_open_image(&file, path.c_str(), READONLY, &status);
  long size[2] = {0, 0};
  fits_get_img_size(file, 2, size, &status);
  REQUIRE(status == 0);
  cv::Mat pixels(static_cast<int>(size[1]), static_cast<int>(size[0]), CV_32FC1);
  float null_value = NAN;
  fits_read_img(file, TFLOAT, 1, static_cast<LONGLONG>(pixels.total()), &null_value, pixels.ptr<float>(), &any_null,
                &status);
  fits_close_file(file, &status);
  REQUIRE(status == 0);
  return pixels;
}

// What check_and_decode_tiles() decodes, whether it did, and the pixels it counted not finite.
struct Decoded {
  bool decoded = false;
  cv::Mat pixels;
  std::size_t nonfinite = 0;
};
Decoded decoded_pixels(const fs::path& path) {
  fitsfile* file = nullptr;
  int status = 0;
  fits_open_diskfile(&file, path.c_str(), READONLY, &status);
  fits_movabs_hdu(file, 2, nullptr, &status);
  long size[2] = {0, 0};
  fits_get_img_size(file, 2, size, &status);
  REQUIRE(status == 0);
  cv::Mat pixels(static_cast<int>(size[1]), static_cast<int>(size[0]), CV_32FC1, cv::Scalar(-1.0));
  bool decoded = false;
  std::size_t nonfinite = 0;
  try {
    decoded = occulta::imaging::fits_detail::check_and_decode_tiles(file, path.string(), "its image in HDU 2",
                                                                    pixels.ptr<float>(), size[0], size[1], nonfinite);
  } catch (...) {
    fits_close_file(file, &status);
    throw;
  }
  fits_close_file(file, &status);
  return {decoded, pixels, nonfinite};
}

std::size_t count_nonfinite(const cv::Mat& m) {
  return std::size_t(std::count_if(m.begin<float>(), m.end<float>(), [](float v) { return !std::isfinite(v); }));
}

// Bit for bit, NaN included (the same bytes).
bool same_bits(const cv::Mat& a, const cv::Mat& b) {
  return a.size() == b.size() && a.type() == b.type() &&
         std::equal(a.ptr<unsigned char>(), a.ptr<unsigned char>() + a.total() * a.elemSize(), b.ptr<unsigned char>());
}

}  // namespace

TEST_CASE("fits_rice_check: integer Rice tiles decoded by the trace equal cfitsio's decoding bit for bit") {
  // Issue 18: the trace decodes the tiles it walks instead of cfitsio decoding them again.
  // Every value of every kind of block (low entropy, high entropy, coded) at 8, 16 and
  // 32 bits, row tiles and 2-D tiles cut short at the edges, must come out as cfitsio's
  // own decoder gives it — BSCALE/BZERO applied and BLANK turned to NaN the same way.
  const fs::path dir = scratch_dir("fits-rice-check-decode");
  const struct {
    int bitpix;
    long tile_x, tile_y;
  } cases[] = {{BYTE_IMG, 77, 1}, {SHORT_IMG, 77, 1}, {LONG_IMG, 77, 1},
               {BYTE_IMG, 16, 16}, {SHORT_IMG, 16, 16}, {LONG_IMG, 30, 20}};
  std::vector<fs::path> paths;
  for (const auto& c : cases) {
    paths.push_back(dir / ("cfitsio_" + std::to_string(paths.size()) + ".fits"));
    write_tiled(paths.back(), c.bitpix, 77, 45, c.tile_x, c.tile_y);
  }
  // occulta's scaled int16 (BSCALE, BZERO, BLANK), with no-data pixels.
  {
    cv::Mat pixels(40, 300, CV_32FC1);
    for (int y = 0; y < pixels.rows; ++y)
      for (int x = 0; x < pixels.cols; ++x)
        pixels.at<float>(y, x) = (x - 150) * (x - 150) + (y - 20) * (y - 20) < 15 * 15
                                     ? NAN
                                     : static_cast<float>(1e4 / (1.0 + 0.01 * x) + 30.0 * std::sin(0.7 * x * y));
    paths.push_back(dir / "ours_int16_blank.fits");
    write_fits(paths.back(), pixels, Header{}, FitsWriteOptions{FitsWriteOptions::Pixels::ScaledInt16, true});
  }
  for (const fs::path& path : paths) {
    CAPTURE(path);
    const cv::Mat expected = cfitsio_pixels(path);
    const Decoded got = decoded_pixels(path);
    CHECK(got.decoded);
    CHECK(same_bits(got.pixels, expected));
    // The pixels not finite are counted as they are decoded (no second pass).
    CHECK(got.nonfinite == count_nonfinite(expected));
    const FitsImage image = read_fits(path);
    CHECK(same_bits(image.pixels, expected));
    CHECK(image.nonfinite_count == count_nonfinite(expected));
  }
  const cv::Mat with_blanks = cfitsio_pixels(paths.back());
  CHECK(std::count_if(with_blanks.begin<float>(), with_blanks.end<float>(), [](float v) { return std::isnan(v); }) > 0);
  // Quantised floats are left to cfitsio (after the trace): nothing written, false.
  cv::Mat floats(30, 50, CV_32FC1);
  cv::randn(floats, 100.0, 5.0);
  write_fits(dir / "ours_float32.fits", floats, Header{}, FitsWriteOptions{FitsWriteOptions::Pixels::Float32, true});
  const Decoded left = decoded_pixels(dir / "ours_float32.fits");
  CHECK_FALSE(left.decoded);
  CHECK(cv::countNonZero(left.pixels != -1.0f) == 0);
  CHECK(same_bits(read_fits(dir / "ours_float32.fits").pixels, cfitsio_pixels(dir / "ours_float32.fits")));
}

TEST_CASE("fits_rice_check: values scaled beyond float's range are counted as not finite, as cfitsio gives them") {
  // to_physical counts blanks alone unless BSCALE/BZERO could take a value past float's
  // range; with BSCALE = 1e30, 32-bit values above ~3.4e8 become ±Inf.
  const fs::path dir = scratch_dir("fits-rice-check-overflow");
  const fs::path path = dir / "scaled.fits";
  write_tiled(path, LONG_IMG, 77, 45, 77, 1);
  fitsfile* file = nullptr;
  int status = 0;
  fits_open_diskfile(&file, path.c_str(), READWRITE, &status);
  fits_movabs_hdu(file, 2, nullptr, &status);
  fits_update_key_dbl(file, "BSCALE", 1e30, -15, "huge, to overflow float", &status);
  fits_close_file(file, &status);
  REQUIRE(status == 0);
  const cv::Mat expected = cfitsio_pixels(path);
  const std::size_t infinite = count_nonfinite(expected);
  CHECK(infinite > 0);
  CHECK(infinite < expected.total());
  const Decoded got = decoded_pixels(path);
  CHECK(got.decoded);
  CHECK(same_bits(got.pixels, expected));
  CHECK(got.nonfinite == infinite);
  CHECK(read_fits(path).nonfinite_count == infinite);
}

TEST_CASE("fits_rice_check: decode_rice gives the values of hand-coded streams") {
  // 16-bit, first value 0x1234, code 0001 (fs = 0), then "1" (mapped 0), "01"
  // (mapped 1 → −1), "001" (mapped 2 → +1), "1" (0): 0x1234, 0x1233, 0x1234, 0x1234.
  std::vector<std::int32_t> values(4, -7);
  const auto bytes = stream({0x12, 0x34, 0x1A, 0x60});
  const auto trace = occulta::imaging::fits_detail::decode_rice(bytes, 4, 32, 2, values.data());
  CHECK(trace.problem.empty());
  const std::vector<std::int32_t> got = values;
  CAPTURE(got[0]);
  CAPTURE(got[1]);
  CAPTURE(got[2]);
  CAPTURE(got[3]);
  CHECK(values == std::vector<std::int32_t>{0x1234, 0x1233, 0x1234, 0x1234});
  // 8-bit high entropy (code 111): raw mapped 0xFF → −128 from 0xAA, wrapping in 8 bits
  // (0xAA − 128 = 0x2A), then 0x00 (no change).
  std::vector<std::int32_t> bytes8(2, -7);
  CHECK(occulta::imaging::fits_detail::decode_rice(stream({0xAA, 0xFF, 0xE0, 0x00}), 2, 32, 1, bytes8.data())
            .problem.empty());
  CHECK(bytes8 == std::vector<std::int32_t>{0x2A, 0x2A});
}

TEST_CASE("fits_rice_check: a compressed image's header text is fits_convert_hdr2str's, byte for byte") {
  // Issue 18: read_fits takes the image's header without the zero-filled scratch data
  // unit fits_convert_hdr2str makes (fits_header.cpp); the text must not change.
  const fs::path dir = scratch_dir("fits-rice-check-header");
  write_tiled(dir / "cfitsio.fits", SHORT_IMG, 77, 45, 16, 16);
  cv::Mat pixels(40, 60, CV_32FC1, cv::Scalar(5.0));
  Header header;
  header.set_real("CDELT1", 60.0);
  header.set_text("DATE-OBS", "2031-03-14T06:10:00.000");
  header.add_commentary("COMMENT", "a comment card");
  write_fits(dir / "ours_int16.fits", pixels, header, FitsWriteOptions{FitsWriteOptions::Pixels::ScaledInt16, true});
  write_fits(dir / "ours_float32.fits", pixels, header, FitsWriteOptions{FitsWriteOptions::Pixels::Float32, true});
  for (const char* name : {"cfitsio.fits", "ours_int16.fits", "ours_float32.fits"}) {
    const fs::path path = dir / name;
    CAPTURE(path);
    fitsfile* file = nullptr;
    int status = 0, count = 0, ours_count = 0;
    fits_open_diskfile(&file, path.c_str(), READONLY, &status);
    fits_movabs_hdu(file, 2, nullptr, &status);
    char *expected = nullptr, *ours = nullptr;
    fits_convert_hdr2str(file, 0, nullptr, 0, &expected, &count, &status);
    REQUIRE(status == 0);
    CHECK(occulta::imaging::fits_detail::compressed_header_text(file, &ours, &ours_count) == 0);
    REQUIRE(ours != nullptr);
    CHECK(ours_count == count);
    CHECK(std::string(ours) == std::string(expected));
    CHECK(std::string(ours).find("NAXIS2  =                   ") != std::string::npos);
    fits_free_memory(expected, &status);
    fits_free_memory(ours, &status);
    fits_close_file(file, &status);
  }
}
