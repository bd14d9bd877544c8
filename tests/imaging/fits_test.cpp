// tests/imaging/fits_test.cpp — imaging/fits: reading what astropy writes, refusing bad
// input with one clear sentence, and writing files that fitsverify and astropy accept.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <iterator>
#include <limits>
#include <set>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"
#include "tests/support/support.hpp"

namespace fs = std::filesystem;
using occulta::imaging::FitsImage;
using occulta::imaging::FitsWriteOptions;
using occulta::imaging::Header;
using occulta::imaging::HeaderCard;
using occulta::imaging::InputError;
using occulta::imaging::kMaxPixels;
using occulta::imaging::read_fits;
using occulta::imaging::read_fits_header;
using occulta::imaging::read_fits_memory;
using occulta::imaging::write_fits;
using occulta::test::run_command;
using occulta::test::slurp;
using occulta::test::spit;
using occulta::test::run_python;
using occulta::test::scratch_dir;
using occulta::test::shell_quote;

namespace {


std::span<const std::byte> as_bytes(const std::string& text) {
  return std::as_bytes(std::span<const char>(text.data(), text.size()));
}

// The reference files, written by astropy (tests/external/write_fits.py) once per test
// process, into a folder of the caller's own: CTest runs test cases as parallel
// processes, and a shared folder was emptied by one while another read it.
const fs::path& reference_folder(const std::string& user) {
  static const fs::path folder = [&] {
    const fs::path dir = scratch_dir("fits-astropy-" + user);
    const auto result = run_python("tests/external/write_fits.py", shell_quote(dir.string()));
    REQUIRE_MESSAGE(result.exit_code == 0, result.output);
    return dir;
  }();
  return folder;
}

// A FITS file built card by card (FITS Standard 4.0 §3.1, §4.1): each card padded to 80
// characters, END, the header padded with spaces to a 2880-byte block, then `data_bytes`
// zero bytes (not padded, so a test can leave the data short).
std::string fits_file(const std::vector<std::string>& cards, std::size_t data_bytes) {
  std::string bytes;
  for (std::string card : cards) {
    card.resize(80, ' ');
    bytes += card;
  }
  std::string end = "END";
  end.resize(80, ' ');
  bytes += end;
  bytes.resize((bytes.size() + 2879) / 2880 * 2880, ' ');
  bytes.append(data_bytes, '\0');
  return bytes;
}

std::string card(const std::string& key, const std::string& value) {
  char text[81];
  std::snprintf(text, sizeof text, "%-8s= %20s", key.c_str(), value.c_str());
  return text;
}

std::vector<std::string> image_cards(int bitpix, const std::vector<long long>& axes) {
  std::vector<std::string> cards = {card("SIMPLE", "T"), card("BITPIX", std::to_string(bitpix)),
                                    card("NAXIS", std::to_string(axes.size()))};
  for (std::size_t i = 0; i < axes.size(); ++i) cards.push_back(card("NAXIS" + std::to_string(i + 1), std::to_string(axes[i])));
  return cards;
}

// A refusal: an InputError whose message is one sentence that begins with the file's
// name and says `phrase` — from the file on disk and, the same bytes, from memory.
void check_refused(const fs::path& path, const std::string& phrase, bool also_from_memory = true) {
  CAPTURE(path);
  CAPTURE(phrase);
  auto check_message = [&](const std::string& message, const std::string& name) {
    CAPTURE(message);
    CHECK(message.rfind(name + ": ", 0) == 0);
    CHECK(message.find(phrase) != std::string::npos);
    CHECK(message.back() == '.');
    CHECK(message.find('\n') == std::string::npos);
    // cfitsio's own wording (routine names, "status =") stays out of user sentences.
    CHECK(message.find("ffopen") == std::string::npos);
    CHECK(message.find("status =") == std::string::npos);
  };
  bool refused = false;
  try {
    read_fits(path);
  } catch (const InputError& error) {
    refused = true;
    check_message(error.what(), path.string());
  }
  CHECK(refused);
  if (!also_from_memory) return;
  const std::string bytes = slurp(path);
  const std::string name = "memory:" + path.filename().string();
  refused = false;
  try {
    read_fits_memory(as_bytes(bytes), name);
  } catch (const InputError& error) {
    refused = true;
    check_message(error.what(), name);
  }
  CHECK(refused);
}

// Pixel values from a manifest: null is NaN, "inf"/"-inf" infinities.
double json_pixel(const nlohmann::json& value) {
  if (value.is_null()) return std::numeric_limits<double>::quiet_NaN();
  if (value.is_string()) return value.get<std::string>() == "inf" ? INFINITY : -INFINITY;
  return value.get<double>();
}

// Pixel by pixel against what astropy read: NaN where astropy has NaN, the same
// infinities, and finite values equal to float32 precision (astropy scales 8- and 16-bit
// data in float32, cfitsio in double, so the last bit may differ).
// `skip_our_nan`: pixels we read as NaN are not compared (see the Rice float test).
void check_pixels(const cv::Mat& pixels, const nlohmann::json& rows, double tolerance_abs = 0.0,
                  bool skip_our_nan = false) {
  REQUIRE(pixels.rows == static_cast<int>(rows.size()));
  for (int y = 0; y < pixels.rows; ++y) {
    REQUIRE(pixels.cols == static_cast<int>(rows[y].size()));
    for (int x = 0; x < pixels.cols; ++x) {
      const double expected = json_pixel(rows[y][x]);
      const double got = pixels.at<float>(y, x);
      CAPTURE(x);
      CAPTURE(y);
      if (skip_our_nan && std::isnan(got)) continue;
      if (std::isnan(expected)) CHECK(std::isnan(got));
      else if (std::isinf(expected)) CHECK(got == expected);
      else CHECK(std::abs(got - expected) <= 2e-7 * std::abs(expected) + tolerance_abs);
    }
  }
}

// Equal pixel for pixel, NaN matching NaN.
bool same_pixels(const cv::Mat& a, const cv::Mat& b) {
  if (a.size() != b.size() || a.type() != b.type()) return false;
  for (int y = 0; y < a.rows; ++y)
    for (int x = 0; x < a.cols; ++x) {
      const float p = a.at<float>(y, x), q = b.at<float>(y, x);
      if (!(p == q || (std::isnan(p) && std::isnan(q)))) return false;
    }
  return true;
}

bool verified(const fs::path& path) {
  // fitsverify (HEASARC, Debian package) prints "verification OK" only with 0 errors and
  // 0 warnings.
  const auto result = run_command(shell_quote(OCCULTA_FITSVERIFY) + " -q " + shell_quote(path.string()));
  INFO(result.output);
  return result.output.find("verification OK") != std::string::npos;
}

nlohmann::json astropy_read(const fs::path& path) {
  const auto result = run_python("tests/external/read_fits.py", shell_quote(path.string()));
  REQUIRE_MESSAGE(result.exit_code == 0, result.output);
  return nlohmann::json::parse(result.output);
}

// A frame-like test image: a smooth ramp, Gaussian noise of known sigma, some NaN.
cv::Mat test_image(int width, int height, double sigma) {
  cv::Mat pixels(height, width, CV_32FC1);
  cv::RNG rng(12345);
  for (int y = 0; y < height; ++y)
    for (int x = 0; x < width; ++x)
      pixels.at<float>(y, x) = static_cast<float>(500.0 + 3.0 * x - 2.0 * y + rng.gaussian(sigma));
  pixels.at<float>(2, 3) = NAN;
  pixels.at<float>(height - 1, width - 1) = NAN;
  return pixels;
}

Header test_header() {
  Header header;
  header.set_text("DATE-OBS", "2031-03-04T07:00:00.000", "start of the exposure");
  header.set_real("DSUN_OBS", 149597870700.0 * 0.987654321, "[m] observer distance");
  header.set_real("HGLN_OBS", -0.1234567890123456789, "[deg]");
  // A complete WCS (WCS Paper I, Greisen & Calabretta 2002): fitsverify checks that
  // the keywords come as a set.
  header.set_text("CTYPE1", "HPLN-TAN");
  header.set_text("CTYPE2", "HPLT-TAN");
  header.set_text("CUNIT1", "arcsec");
  header.set_text("CUNIT2", "arcsec");
  header.set_real("CRPIX1", 512.5);
  header.set_real("CRPIX2", 498.25);
  header.set_real("CRVAL1", 0.0);
  header.set_real("CRVAL2", 0.0);
  header.set_real("CDELT1", 14.7, "[arcsec]");
  header.set_real("CDELT2", 14.7, "[arcsec]");
  header.set_integer("NSUM", 9007199254740993LL, "beyond double precision");
  header.set_logical("POLAR", false);
  header.set_text("OBSRVTRY", "Test Orbiter's camera", "a quote inside");
  header.set_text("NOTE", std::string(90, 'x') + " end", "longer than one card");
  header.add_commentary("HISTORY", "written by the fits test");
  // Structural cards a caller might pass along: the writer must describe its own data.
  header.set_integer("NAXIS1", 999);
  header.set_integer("BITPIX", 8);
  return header;
}

void check_cards_kept(const Header& written, const Header& read) {
  for (const HeaderCard& card : written.cards) {
    if (card.key == "NAXIS1" || card.key == "BITPIX" || card.kind == HeaderCard::Kind::Commentary) continue;
    CAPTURE(card.key);
    const HeaderCard* back = read.find(card.key);
    REQUIRE(back != nullptr);
    CHECK(back->kind == card.kind);
    CHECK(back->integer == card.integer);
    CHECK(back->real == card.real);  // shortest round-trip digits: exact
    CHECK(back->text == card.text);
    CHECK(back->comment == card.comment);
  }
  CHECK(read.find("DATE") != nullptr);  // file creation date, FITS Standard 4.0 §4.4.2.1
  bool history = false;
  for (const HeaderCard& card : read.cards) history = history || (card.key == "HISTORY" && card.text == "written by the fits test");
  CHECK(history);
}

}  // namespace

TEST_CASE("fits: astropy-written images read back with astropy's values") {
  // Files and expected values from astropy.io.fits (tests/external/write_fits.py);
  // scaling physical = BZERO + BSCALE × stored and BLANK → no data: FITS Standard 4.0
  // §4.4.2.5; unsigned 16-bit by BZERO = 32768: §5.2.5; NaN/Inf floats: §5.3;
  // IMAGE extension: §7.1; Rice tile compression: Pence, Seaman & White (2009).
  const fs::path folder = reference_folder("read");
  const auto manifest = nlohmann::json::parse(slurp(folder / "manifest.json"));
  REQUIRE(manifest["images"].size() >= 10);
  for (const auto& expected : manifest["images"]) {
    const fs::path path = folder / expected["name"].get<std::string>();
    CAPTURE(path);
    const std::string before = slurp(path);
    const FitsImage image = read_fits(path);
    CHECK(slurp(path) == before);  // reading never changes the input
    CHECK(image.source == path.string());
    CHECK(image.hdu == expected["hdu"].get<int>());
    CHECK(image.bitpix == expected["bitpix"].get<int>());
    CHECK(image.compressed == expected["compressed"].get<bool>());
    CHECK(image.pixels.type() == CV_32FC1);
    CHECK(image.pixels.cols == expected["width"].get<int>());
    CHECK(image.pixels.rows == expected["height"].get<int>());
    CHECK(image.nonfinite_count == expected["nonfinite"].get<std::size_t>());
    check_pixels(image.pixels, expected["pixels"]);
    for (const auto& item : expected["keywords"].items()) {
      // Named copies, not a structured binding: clang 14 cannot capture those in CAPTURE.
      const std::string key = item.key();
      const nlohmann::json value = item.value();
      CAPTURE(key);
      const HeaderCard* found = image.header.find(key);
      REQUIRE(found != nullptr);
      if (value.is_string()) {
        CHECK(found->kind == HeaderCard::Kind::Text);
        CHECK(found->text == value.get<std::string>());
      } else if (value.is_boolean()) {
        CHECK(found->kind == HeaderCard::Kind::Logical);
        CHECK((found->integer != 0) == value.get<bool>());
      } else if (value.is_number_integer()) {
        CHECK(found->kind == HeaderCard::Kind::Integer);
        CHECK(found->integer == value.get<long long>());
      } else {
        CHECK(image.header.number(key) == doctest::Approx(value.get<double>()).epsilon(1e-15));
      }
    }

    // The same bytes from memory give the same image.
    const FitsImage again = read_fits_memory(as_bytes(before), "memory copy");
    CHECK(again.source == "memory copy");
    CHECK(again.hdu == image.hdu);
    CHECK(again.nonfinite_count == image.nonfinite_count);
    CHECK(same_pixels(again.pixels, image.pixels));
  }
}

TEST_CASE("fits: an image in an extension inherits the primary's keywords") {
  // extension.fits (astropy): the primary has DSUN_OBS, OBSRVTRY and a DATE-OBS; the
  // IMAGE extension has its own DATE-OBS, which must win.
  const fs::path path = reference_folder("inherit") / "extension.fits";
  const Header header = read_fits_header(path);
  CHECK(header.text("DATE-OBS") == "2031-03-04T07:12:00");
  CHECK(header.number("DSUN_OBS") == 1.5e11);
  CHECK(header.text("OBSRVTRY") == "Test Orbiter");
  CHECK(header.text("XTENSION") == "IMAGE");
  CHECK(header.text("EXTNAME") == "FRAME");
  // Structural keywords are the extension's own: its NAXIS = 2, not the primary's 0.
  int naxis_cards = 0;
  for (const HeaderCard& card : header.cards) naxis_cards += card.key == "NAXIS";
  CHECK(naxis_cards == 1);
  CHECK(header.number("NAXIS") == 2.0);
  CHECK(header.find("SIMPLE") == nullptr);
  CHECK(header.find("EXTEND") == nullptr);
}

TEST_CASE("fits: read_fits_header matches read_fits without reading pixels") {
  const fs::path path = reference_folder("header") / "rice_int16.fits";
  const Header header = read_fits_header(path);
  const FitsImage image = read_fits(path);
  REQUIRE(header.cards.size() == image.header.cards.size());
  for (std::size_t i = 0; i < header.cards.size(); ++i) CHECK(header.cards[i].key == image.header.cards[i].key);
  // A compressed image's header is the image's (ZBITPIX → BITPIX), as the tiled
  // convention defines it (Pence et al. 2009 §4).
  CHECK(header.number("BITPIX") == 16.0);
  CHECK(header.find("ZBITPIX") == nullptr);
}

TEST_CASE("fits: bad input is refused with one sentence naming the file") {
  const fs::path dir = scratch_dir("fits-bad-input");
  const fs::path folder = reference_folder("refused");

  spit(dir / "empty.fits", "");
  check_refused(dir / "empty.fits", "empty");

  spit(dir / "notes.fits", "These are notes, not an image.\n");
  check_refused(dir / "notes.fits", "not a FITS file");

  // A PNG signature: binary, not FITS.
  spit(dir / "picture.fits", std::string("\x89PNG\r\n\x1a\n", 8) + std::string(3000, '\0'));
  check_refused(dir / "picture.fits", "not a FITS file");

  // Truncated inside the data: float32.fits holds 6 × 4 × 4 = 96 bytes of data.
  const std::string whole = slurp(folder / "float32.fits");
  spit(dir / "cut_data.fits", whole.substr(0, 2880 + 50));
  check_refused(dir / "cut_data.fits", "truncated");
  // Truncated inside the header block (FITS Standard 4.0 §3.1: headers fill 2880-byte blocks).
  spit(dir / "cut_header.fits", whole.substr(0, 1000));
  check_refused(dir / "cut_header.fits", "truncated");
  // The header alone, its data gone.
  spit(dir / "no_data.fits", whole.substr(0, 2880));
  check_refused(dir / "no_data.fits", "truncated");

  check_refused(folder / "header_only.fits", "holds no image");
  check_refused(folder / "table_only.fits", "only tables");
  check_refused(folder / "cube3.fits", "cube of 3 planes");

  // Axes larger than the file holds: 4000 × 4000 float32 = 64 MB claimed, one block there.
  spit(dir / "claims_more.fits", fits_file(image_cards(-32, {4000, 4000}), 2880));
  check_refused(dir / "claims_more.fits", "truncated");
  // Axes whose product exceeds kMaxPixels (and would overflow 32-bit arithmetic):
  // refused before any allocation, so no out-of-memory and no cv::Exception.
  spit(dir / "too_big.fits", fits_file(image_cards(16, {100000, 100000}), 2880));
  check_refused(dir / "too_big.fits", "more than occulta reads");
  spit(dir / "overflow.fits", fits_file(image_cards(8, {4611686018427387904LL, 4}), 2880));
  check_refused(dir / "overflow.fits", "more than occulta reads");
  static_assert(kMaxPixels < 100000ull * 100000ull);

  spit(dir / "line.fits", fits_file(image_cards(-32, {100}), 400));
  check_refused(dir / "line.fits", "NAXIS = 1");
  spit(dir / "four_d.fits", fits_file(image_cards(-32, {4, 4, 1, 2}), 256));
  check_refused(dir / "four_d.fits", "NAXIS = 4");

  // FITS Standard 4.0 Table 8 allows BITPIX 8, 16, 32, 64, −32, −64 only.
  spit(dir / "bitpix12.fits", fits_file(image_cards(12, {4, 4}), 2880));
  check_refused(dir / "bitpix12.fits", "BITPIX");
  // A header block with no END card, then the end of the file.
  std::string no_end = fits_file(image_cards(-32, {2, 2}), 0).substr(0, 2880);
  no_end.replace(no_end.find("END "), 3, "   ");
  spit(dir / "no_end.fits", no_end);
  check_refused(dir / "no_end.fits", "truncated");

  // The first keywords of an HDU, in their fixed order (FITS Standard 4.0 §4.4.1, §7.3.1),
  // are checked before cfitsio reads them. Regression case from fits_fuzz: a binary
  // table whose PCOUNT card begins with bytes outside ASCII made cfitsio's table set-up
  // allocate by an uninitialised field count (a calloc overflow under AddressSanitizer).
  const std::string primary = fits_file(image_cards(8, {}), 0);
  std::vector<std::string> table = {card("XTENSION", "'BINTABLE'"), card("BITPIX", "8"), card("NAXIS", "2"),
                                    card("NAXIS1", "8"), card("NAXIS2", "12"), card("PCOUNT", "0"),
                                    card("GCOUNT", "1"), card("TFIELDS", "1"), "TFORM1  = '1PB(35) '"};
  std::vector<std::string> bad_keyword = table;
  bad_keyword[5] = std::string(4, '\xff') + bad_keyword[5];
  spit(dir / "table_bad_pcount.fits", primary + fits_file(bad_keyword, 2880));
  check_refused(dir / "table_bad_pcount.fits", "HDU 2 is malformed: card 6 should be PCOUNT");
  // Regression cases from fits_fuzz: "=" not followed by a space is no value indicator
  // (FITS Standard 4.0 §4.1.2.2). cfitsio then set a table up by an uninitialised field
  // count (NAXIS1), or divided by a tile size of 0 (ZTILE1 "=0  16").
  std::vector<std::string> no_indicator = table;
  no_indicator[3] = "NAXIS1  =#                   8";
  spit(dir / "table_naxis1_no_indicator.fits", primary + fits_file(no_indicator, 2880));
  check_refused(dir / "table_naxis1_no_indicator.fits",
                "HDU 2 is malformed: NAXIS1 has \"=\" without the space after it that makes a value indicator");
  std::vector<std::string> tile_no_indicator = table;
  tile_no_indicator.insert(tile_no_indicator.end(), {card("ZIMAGE", "T"), card("ZBITPIX", "16"), card("ZNAXIS", "2"),
                                                     card("ZNAXIS1", "16"), card("ZNAXIS2", "12"),
                                                     "ZTILE1  =0                  16", card("ZCMPTYPE", "'RICE_1'")});
  spit(dir / "tile_no_indicator.fits", primary + fits_file(tile_no_indicator, 2880));
  check_refused(dir / "tile_no_indicator.fits", "ZTILE1 has \"=\" without the space after it");
  // Regression case from fits_fuzz: cfitsio read a Rice block size "0   32" as 0 and
  // divided by it on entering the HDU.
  std::vector<std::string> zero_block = tile_no_indicator;
  zero_block[14] = card("ZTILE1", "16");
  zero_block.insert(zero_block.end(), {card("ZNAME1", "'BLOCKSIZE'"), card("ZVAL1", "0   32")});
  spit(dir / "rice_block_text.fits", primary + fits_file(zero_block, 2880));
  check_refused(dir / "rice_block_text.fits", "ZVAL1 is \"0   32\", not an integer");
  zero_block.back() = card("ZVAL1", "0");
  spit(dir / "rice_block_zero.fits", primary + fits_file(zero_block, 2880));
  check_refused(dir / "rice_block_zero.fits", "ZVAL1 is not a positive integer");
  std::vector<std::string> no_tfields = table;
  no_tfields.erase(no_tfields.begin() + 7);
  spit(dir / "table_no_tfields.fits", primary + fits_file(no_tfields, 2880));
  check_refused(dir / "table_no_tfields.fits", "card 8 should be TFIELDS");
  std::vector<std::string> many_fields = table;
  many_fields[7] = card("TFIELDS", "5000");
  spit(dir / "table_many_fields.fits", primary + fits_file(many_fields, 2880));
  check_refused(dir / "table_many_fields.fits", "TFIELDS is 5000, outside 0–999");
  std::vector<std::string> odd_bitpix = image_cards(-32, {2, 2});
  odd_bitpix[1] = card("BITPIX", "-3\x80");
  spit(dir / "bitpix_text.fits", fits_file(odd_bitpix, 2880));
  check_refused(dir / "bitpix_text.fits", "BITPIX is \"-3?\", not an integer");

  // Regression case from fits_fuzz: cfitsio places an image's pixels after PCOUNT
  // parameters even in a primary header, and read a memory file past its end.
  std::vector<std::string> with_pcount = image_cards(-32, {16, 12});
  with_pcount.insert(with_pcount.end(), {card("PCOUNT", "840"), card("GCOUNT", "1")});
  spit(dir / "image_pcount.fits", fits_file(with_pcount, 2880));
  check_refused(dir / "image_pcount.fits", "its primary image has PCOUNT = 840 and GCOUNT = 1, where an image has 0 and 1");

  // Regression cases from fits_fuzz: an unquoted column name of 70 characters overflowed
  // cfitsio's 70-byte field (ffgtbp); a ZTENSION cfitsio could not rebuild the image
  // header from leaked the header text.
  std::vector<std::string> long_name = table;
  long_name.push_back("TTYPE1  = " + std::string(70, 'x'));
  spit(dir / "table_unquoted_ttype.fits", primary + fits_file(long_name, 2880));
  check_refused(dir / "table_unquoted_ttype.fits", "HDU 2 is malformed: TTYPE1 is not a quoted text value");
  std::vector<std::string> no_space_name = table;
  no_space_name.push_back("TTYPE1  =" + std::string(71, '\xda'));
  spit(dir / "table_ttype_no_indicator.fits", primary + fits_file(no_space_name, 2880));
  check_refused(dir / "table_ttype_no_indicator.fits", "TTYPE1 is not a quoted text value");

  check_refused(dir / "missing.fits", "does not exist", false);
  check_refused(dir, "folder", false);
}

TEST_CASE("fits: non-finite pixels are accepted and counted") {
  // float32.fits (astropy) holds NaN, +Inf and −Inf, kept as stored (FITS Standard 4.0 §5.3).
  const FitsImage image = read_fits(reference_folder("nonfinite") / "float32.fits");
  CHECK(image.nonfinite_count == 3);
  CHECK(std::isnan(image.pixels.at<float>(0, 0)));
  CHECK(image.pixels.at<float>(2, 3) == INFINITY);
  CHECK(image.pixels.at<float>(3, 5) == -INFINITY);
}

TEST_CASE("fits: float32 round trip is exact and the file passes fitsverify") {
  const fs::path dir = scratch_dir("fits-write-float");
  cv::Mat pixels = test_image(37, 23, 5.0);
  pixels.at<float>(4, 4) = INFINITY;
  const Header header = test_header();
  write_fits(dir / "frame.fits", pixels, header);
  CHECK(verified(dir / "frame.fits"));

  const FitsImage back = read_fits(dir / "frame.fits");
  CHECK(back.hdu == 0);
  CHECK(back.bitpix == -32);
  CHECK_FALSE(back.compressed);
  CHECK(back.nonfinite_count == 3);
  CHECK(back.header.number("NAXIS1") == 37.0);  // the writer's own, not the caller's 999
  CHECK(back.header.number("BITPIX") == -32.0);
  CHECK(same_pixels(back.pixels, pixels));
  check_cards_kept(header, back.header);

  // astropy reads the same pixels and keywords (reference library, Debian python3-astropy).
  const auto reference = astropy_read(dir / "frame.fits");
  CHECK(reference["hdu"] == 0);
  CHECK(reference["bitpix"] == -32);
  check_pixels(back.pixels, reference["pixels"]);
  CHECK(reference["header"]["OBSRVTRY"] == "Test Orbiter's camera");
  CHECK(reference["header"]["NOTE"] == std::string(90, 'x') + " end");
  CHECK(reference["header"]["DSUN_OBS"].get<double>() == header.number("DSUN_OBS"));
  CHECK(reference["header"]["NSUM"].get<long long>() == 9007199254740993LL);
}

TEST_CASE("fits: a file too large to read whole is read from the disk, the same pixels") {
  // read_fits reads a file of up to 64 MiB whole and decodes it from memory; a larger one
  // goes through cfitsio's disk driver (imaging/fits.cpp). 4100 × 4100 float32 is 67.2 MB.
  const fs::path dir = scratch_dir("fits-beyond-whole-read");
  cv::Mat pixels(4100, 4100, CV_32FC1);
  for (int y = 0; y < pixels.rows; ++y) {
    float* row = pixels.ptr<float>(y);
    for (int x = 0; x < pixels.cols; ++x) row[x] = float(y % 97) * 0.5f - float(x % 89);
  }
  pixels.at<float>(17, 4000) = NAN;
  write_fits(dir / "large.fits", pixels, test_header());
  REQUIRE(fs::file_size(dir / "large.fits") > (std::uintmax_t{64} << 20));
  const FitsImage back = read_fits(dir / "large.fits");
  CHECK(back.nonfinite_count == 1);
  CHECK(same_pixels(back.pixels, pixels));
  CHECK(back.header.number("NAXIS1") == 4100.0);
  fs::remove_all(dir);
}

TEST_CASE("fits: a compressed image whose header cfitsio cannot rebuild is refused without a leak") {
  // Regression case from fits_fuzz: an unquoted 70-character ZTENSION in a Rice frame's
  // table makes cfitsio fail to rebuild the image header, and the text it had allocated
  // leaked (LeakSanitizer) because it was freed with the failed status.
  const fs::path dir = scratch_dir("fits-ztension");
  write_fits(dir / "frame.fits", cv::Mat(4, 6, CV_32FC1, cv::Scalar(3.0f)), test_header(),
             FitsWriteOptions{FitsWriteOptions::Pixels::ScaledInt16, true});
  std::string bytes = slurp(dir / "frame.fits");
  const std::size_t date = bytes.find("DATE-OBS=", 2880);
  REQUIRE(date != std::string::npos);
  bytes.replace(date, 80, "ZTENSION= " + std::string(70, 'x'));
  spit(dir / "bad_ztension.fits", bytes);
  check_refused(dir / "bad_ztension.fits", "");
}

TEST_CASE("fits: scaled int16 round trip is within BSCALE/2") {
  const fs::path dir = scratch_dir("fits-write-int16");
  const cv::Mat pixels = test_image(40, 30, 5.0);
  for (const bool rice : {false, true}) {
    CAPTURE(rice);
    const fs::path path = dir / (rice ? "frame_rice.fits" : "frame.fits");
    write_fits(path, pixels, test_header(), FitsWriteOptions{FitsWriteOptions::Pixels::ScaledInt16, rice});
    CHECK(verified(path));
    const FitsImage back = read_fits(path);
    CHECK(back.bitpix == 16);
    CHECK(back.compressed == rice);
    CHECK(back.hdu == (rice ? 1 : 0));
    CHECK(back.nonfinite_count == 2);
    CHECK(back.header.number("BLANK") == -32768.0);
    // FITS Standard 4.0 §4.4.2.5: physical = BZERO + BSCALE × stored, so rounding to
    // the nearest stored integer is off by at most BSCALE/2 (plus float32 rounding).
    const double bscale = back.header.number("BSCALE").value_or(0.0);
    double finite_min = 0, finite_max = 0;
    cv::minMaxLoc(pixels, &finite_min, &finite_max, nullptr, nullptr, pixels == pixels);
    CHECK(bscale == doctest::Approx((finite_max - finite_min) / 65534.0));
    for (int y = 0; y < pixels.rows; ++y)
      for (int x = 0; x < pixels.cols; ++x) {
        const float a = pixels.at<float>(y, x), b = back.pixels.at<float>(y, x);
        if (std::isnan(a)) CHECK(std::isnan(b));
        else CHECK(std::abs(a - b) <= 0.5 * bscale + 1e-6 * std::abs(a));
      }
    check_cards_kept(test_header(), back.header);
    const auto reference = astropy_read(path);
    CHECK(reference["compressed"] == rice);
    check_pixels(back.pixels, reference["pixels"]);
  }
}

TEST_CASE("fits: Rice-compressed float32 keeps values to a fraction of the noise") {
  const fs::path dir = scratch_dir("fits-write-rice");
  const double sigma = 4.0;
  const cv::Mat pixels = test_image(64, 16, sigma);
  const fs::path path = dir / "frame.fits";
  write_fits(path, pixels, test_header(), FitsWriteOptions{FitsWriteOptions::Pixels::Float32, true});
  CHECK(verified(path));
  const FitsImage back = read_fits(path);
  CHECK(back.hdu == 1);  // primary empty, image in the compressed extension
  CHECK(back.compressed);
  CHECK(back.bitpix == -32);
  CHECK(back.nonfinite_count == 2);
  CHECK(std::isnan(back.pixels.at<float>(2, 3)));
  // Tiled convention (Pence et al. 2009 §4.1): floats are quantised in steps of the
  // tile's estimated noise / q (q = 16 here), so each value is off by at most half a
  // step; allowing the estimate to be up to twice sigma gives sigma / 16.
  double worst = 0;
  for (int y = 0; y < pixels.rows; ++y)
    for (int x = 0; x < pixels.cols; ++x)
      if (std::isfinite(pixels.at<float>(y, x)))
        worst = std::max(worst, static_cast<double>(std::abs(pixels.at<float>(y, x) - back.pixels.at<float>(y, x))));
  CHECK(worst > 0.0);  // quantised indeed: the option did compress
  CHECK(worst <= sigma / 16);
  check_cards_kept(test_header(), back.header);
  // astropy decompresses the same tiles to the same values. Null pixels are left out of
  // this comparison: astropy 5.2 (Debian 12) decodes the convention's null value (the
  // ZBLANK keyword, Pence et al. 2009 §4.1) in quantised float tiles as a number, where
  // cfitsio, the convention's reference implementation, gives no data; they are checked
  // against the written NaN above instead.
  const auto reference = astropy_read(path);
  CHECK(reference["compressed"] == true);
  check_pixels(back.pixels, reference["pixels"], 1e-6, true);
}

TEST_CASE("fits: a failed write leaves nothing behind and changes nothing") {
  const fs::path dir = scratch_dir("fits-write-atomic");
  const cv::Mat pixels = test_image(8, 8, 1.0);

  // Into a folder that does not exist: refused, nothing created.
  const fs::path nowhere = dir / "missing" / "frame.fits";
  try {
    write_fits(nowhere, pixels, Header{});
    FAIL("wrote into a missing folder");
  } catch (const InputError& error) {
    const std::string message = error.what();
    CHECK(message.rfind(nowhere.string() + ": ", 0) == 0);
    CHECK(message.find("does not exist") != std::string::npos);
  }
  CHECK_FALSE(fs::exists(dir / "missing"));
  CHECK(fs::is_empty(dir));

  // Over an existing file, failing part way (a keyword FITS cannot hold): the old file
  // stays byte for byte, and no temporary is left beside it.
  const fs::path target = dir / "frame.fits";
  write_fits(target, pixels, test_header());
  const std::string before = slurp(target);
  Header bad = test_header();
  bad.set_real("bad key", 1.0);
  CHECK_THROWS_WITH_AS(write_fits(target, pixels * 2.0, bad),
                       doctest::Contains("\"bad key\" is not a FITS keyword"), InputError);
  CHECK(slurp(target) == before);
  std::set<std::string> names;
  for (const auto& entry : fs::directory_iterator(dir)) names.insert(entry.path().filename().string());
  CHECK(names == std::set<std::string>{"frame.fits"});

  // A header value FITS cannot hold is refused the same way.
  Header infinite;
  infinite.set_real("EXPTIME", INFINITY);
  CHECK_THROWS_WITH_AS(write_fits(target, pixels, infinite), doctest::Contains("finite"), InputError);
  CHECK(slurp(target) == before);

  // Pixels of the wrong type are refused, not converted.
  CHECK_THROWS_AS(write_fits(dir / "wrong.fits", cv::Mat(4, 4, CV_8UC1, cv::Scalar(1)), Header{}), InputError);
  CHECK_FALSE(fs::exists(dir / "wrong.fits"));
}

TEST_CASE("fits: header accessors replace, find and type") {
  Header header;
  header.set_real("EXPTIME", 1.5, "[s]");
  header.set_real("EXPTIME", 2.5);
  header.set_text("DATE-OBS", "2031-03-04");
  header.set_integer("NSUM", 3);
  header.set_logical("POLAR", true);
  header.add_commentary("HISTORY", "one");
  header.add_commentary("HISTORY", "two");
  CHECK(header.cards.size() == 6);
  CHECK(header.number("EXPTIME") == 2.5);
  CHECK(header.find("EXPTIME")->comment.empty());
  CHECK(header.number("NSUM") == 3.0);
  CHECK_FALSE(header.number("DATE-OBS").has_value());  // Text is not a number
  CHECK_FALSE(header.number("POLAR").has_value());     // nor is Logical
  CHECK_FALSE(header.text("NSUM").has_value());
  CHECK(header.text("DATE-OBS") == "2031-03-04");
  CHECK(header.find("MISSING") == nullptr);
  CHECK(header.find("HISTORY")->text == "one");
}
