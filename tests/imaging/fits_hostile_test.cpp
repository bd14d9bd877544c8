// tests/imaging/fits_hostile_test.cpp — hostile and damaged FITS files (issue 13): each
// reproducer in the fuzzers' regression corpus is refused with one sentence, integer
// cards cfitsio would fail to convert are refused before it sees them, checksums are
// verified (FITS Standard 4.0 §4.4.2.7), and gzip input is bounded by its own headers.
#include <doctest/doctest.h>

#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include <fitsio.h>
#include <zlib.h>

#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"
#include "tests/support/support.hpp"

namespace fs = std::filesystem;
using occulta::imaging::ChecksumPolicy;
using occulta::imaging::FitsWriteOptions;
using occulta::imaging::Header;
using occulta::imaging::InputError;
using occulta::imaging::read_fits;
using occulta::imaging::read_fits_memory;
using occulta::imaging::set_checksum_policy;
using occulta::imaging::write_fits;
using occulta::test::scratch_dir;
using occulta::test::slurp;
using occulta::test::spit;

namespace {

// One sentence: InputError's form "<file>: <problem>." with no second sentence or line.
void check_one_sentence(const std::string& message, const std::string& source) {
  INFO(message);
  CHECK(message.starts_with(source + ": "));
  CHECK(message.ends_with("."));
  CHECK(message.find('\n') == std::string::npos);
  CHECK(message.find(". ") == std::string::npos);
}

std::string refusal(const fs::path& path) {
  try {
    read_fits(path);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

fs::path frame(const fs::path& dir, const std::string& name, const FitsWriteOptions& options = {}) {
  cv::Mat pixels(16, 16, CV_32FC1);
  for (int y = 0; y < pixels.rows; ++y)
    for (int x = 0; x < pixels.cols; ++x) pixels.at<float>(y, x) = static_cast<float>(100 + x + 3 * y);
  Header header;
  header.set_text("DATE-OBS", "2031-03-04T07:00:00.000");
  write_fits(dir / name, pixels, header, options);
  return dir / name;
}

// The bytes gzip-compressed (RFC 1952 wrapper: zlib's deflateInit2 with 16 + MAX_WBITS),
// followed in the uncompressed stream by `zeros` zero bytes, fed in 1 MiB pieces.
std::string gzip(const std::string& bytes, std::size_t zeros = 0) {
  z_stream stream{};
  REQUIRE(deflateInit2(&stream, 9, Z_DEFLATED, 16 + MAX_WBITS, 9, Z_DEFAULT_STRATEGY) == Z_OK);
  std::string out;
  std::vector<unsigned char> buffer(1 << 20);
  const std::vector<unsigned char> nothing(1 << 20, 0);
  auto feed = [&](const unsigned char* data, std::size_t size, int flush) {
    stream.next_in = const_cast<unsigned char*>(data);
    stream.avail_in = static_cast<uInt>(size);
    do {
      stream.next_out = buffer.data();
      stream.avail_out = static_cast<uInt>(buffer.size());
      deflate(&stream, flush);
      out.append(reinterpret_cast<const char*>(buffer.data()), buffer.size() - stream.avail_out);
    } while (stream.avail_out == 0);
  };
  feed(reinterpret_cast<const unsigned char*>(bytes.data()), bytes.size(), Z_NO_FLUSH);
  for (std::size_t left = zeros; left > 0;) {
    const std::size_t n = std::min(left, nothing.size());
    feed(nothing.data(), n, Z_NO_FLUSH);
    left -= n;
  }
  feed(nullptr, 0, Z_FINISH);
  deflateEnd(&stream);
  return out;
}

// Where the data of HDU `hdu` (1-based) begin and end in a file, by cfitsio.
std::pair<long long, long long> data_span(const fs::path& path, int hdu) {
  fitsfile* file = nullptr;
  int status = 0;
  fits_open_diskfile(&file, path.c_str(), READONLY, &status);
  fits_movabs_hdu(file, hdu, nullptr, &status);
  LONGLONG header_start = 0, data_start = 0, data_end = 0;
  fits_get_hduaddrll(file, &header_start, &data_start, &data_end, &status);
  fits_close_file(file, &status);
  REQUIRE(status == 0);
  return {data_start, data_end};
}

// A reproducer in the fuzzers' regression corpus (tests/fuzz/corpus/fits_fuzz/NAME):
// refused with one sentence naming the file by the disk reader, refused by the memory
// reader too. Returns the disk reader's sentence.
std::string check_reproducer_refused(const std::string& name) {
  const fs::path path = occulta::test::source_path("tests/fuzz/corpus/fits_fuzz/" + name);
  const std::string message = refusal(path);
  INFO(name << ": " << message);
  REQUIRE(!message.empty());
  check_one_sentence(message, path.string());
  const std::string bytes = slurp(path);
  CHECK_THROWS_AS(read_fits_memory(std::as_bytes(std::span(bytes)), "memory"), InputError);
  return message;
}

// The sentence the memory reader gives for reproducer NAME (as check_reproducer_refused)
// with the 80-byte card `index` of its bytes, which begins with `was`, replaced by `card`:
// a file found with two faults, the first mended so that the second is the one refused.
std::string refusal_with_card_mended(const std::string& name, std::size_t index, std::string_view was,
                                     const std::string& card) {
  std::string bytes = slurp(occulta::test::source_path("tests/fuzz/corpus/fits_fuzz/" + name));
  REQUIRE(bytes.compare(index * 80, was.size(), was) == 0);
  bytes.replace(index * 80, 80, (card + std::string(80, ' ')).substr(0, 80));
  try {
    read_fits_memory(std::as_bytes(std::span(bytes)), "memory");
  } catch (const InputError& e) {
    return e.what();
  }
  FAIL("read " << name << " with its card " << index + 1 << " mended");
  return {};
}

}  // namespace

TEST_CASE("fits hostile: every FITS reproducer is refused with one sentence, through the disk and memory readers") {
  // ../shared/repro: tile-compressed images whose ZBITPIX, BLANK or ZBLANK value made
  // cfitsio's ffc2j overflow its message buffer (exit 134 in the Release build).
  for (const char* name : {"repro-fits-crash-cfitsio-ffc2j.fits", "repro-fits-zblank-long-value-fuzz.fits",
                           "repro-fits-zbitpix-long-value.fits", "repro-fits-blank-long-value.fits"}) {
    check_reproducer_refused(name);
    const fs::path path = occulta::test::source_path(std::string("tests/fuzz/corpus/fits_fuzz/") + name);
    // The command line: one line on standard error, exit 1 (not 134).
    const auto run = occulta::test::run_command(occulta::test::shell_quote(occulta::test::occulta_binary().string()) +
                                                " inspect " + occulta::test::shell_quote(path.string()));
    INFO(run.output);
    CHECK(run.exit_code == 1);
  }
  CHECK(check_reproducer_refused("repro-fits-zbitpix-long-value.fits").find("ZBITPIX is \"9999") != std::string::npos);
}

TEST_CASE("fits hostile: GZIP tiles whose stream is damaged or unpacks past its tile are refused before cfitsio") {
  // Found by fits_fuzz under ASan (tests/fuzz/corpus/fits_fuzz): cfitsio 4.2 leaked its
  // tile buffer on a damaged GZIP_2 stream, and grew its buffer for minutes (360 MB) on a
  // GZIP tile whose stream unpacks far past the tile's pixels. imaging/fits_rice_check
  // now inflates each GZIP tile first, bounded by 8 bytes a pixel.
  for (const char* name : {"fuzz-gzip2-tile-damaged-leak.fits", "fuzz-gzip-tile-unbounded.fits"}) {
    CHECK(check_reproducer_refused(name).find("gzip stream") != std::string::npos);
  }
}

TEST_CASE("fits hostile: an integer card cfitsio converts must hold an integer within 64 bits") {
  const fs::path dir = scratch_dir("fits_hostile_integer_cards");
  FitsWriteOptions int16;
  int16.pixels = FitsWriteOptions::Pixels::ScaledInt16;
  const std::string good = slurp(frame(dir, "int16.fits", int16));
  const std::size_t blank = good.find("BLANK   = ");
  REQUIRE(blank != std::string::npos);
  // Each value replaces BLANK's value field (columns 11–80) and must be refused; the
  // good file reads.
  CHECK_NOTHROW(read_fits_memory(std::as_bytes(std::span(good)), "good"));
  for (const std::string& value : {std::string(70, '1'), std::string("9223372036854775808"), std::string("12 34"),
                                  std::string("'text'"), std::string("1.5"), std::string(""),
                                  std::string("-") + std::string(40, '9')}) {
    std::string bad = good;
    std::string field = value + std::string(70 - std::min<std::size_t>(70, value.size()), ' ');
    bad.replace(blank + 10, 70, field.substr(0, 70));
    try {
      read_fits_memory(std::as_bytes(std::span(bad)), "bad");
      FAIL("read a BLANK of \"" << value << "\"");
    } catch (const InputError& e) {
      check_one_sentence(e.what(), "bad");
      CHECK(std::string(e.what()).find("BLANK") != std::string::npos);
    }
  }
  // cfitsio 4.2 also reads a value whose "=" is not in column 9 (the name runs to the
  // first space): "BLANK  =" followed by 60 letters overflowed ffc2j's message buffer
  // (the fast fuzz campaign, tests/fuzz/corpus/fits_fuzz/fuzz-blank-equals-in-column-8.fits).
  // §4.1.2.2 puts the value indicator in columns 9–10, so such a typed card is refused.
  for (const std::string& card : {"BLANK  =  " + std::string(60, 'A'), std::string("BLANK= -32768")}) {
    std::string bad = good;
    bad.replace(blank, 80, (card + std::string(80, ' ')).substr(0, 80));
    try {
      read_fits_memory(std::as_bytes(std::span(bad)), "bad");
      FAIL("read the card \"" << card << "\"");
    } catch (const InputError& e) {
      check_one_sentence(e.what(), "bad");
      CHECK(std::string(e.what()).find("BLANK has its value indicator \"=\" in column ") != std::string::npos);
    }
  }
  // The file found holds a damaged keyword name before it ("DTA E", refused first since
  // every name is checked for spaces); the cards above test the rule itself.
  check_reproducer_refused("fuzz-blank-equals-in-column-8.fits");
  // −2⁶³ is a 64-bit integer (FITS Standard 4.0 §4.2.3 sets no range; cfitsio reads long long).
  std::string edge = good;
  const std::string lowest = "-9223372036854775808";
  edge.replace(blank + 10, 70, std::string(30 - lowest.size(), ' ') + lowest + std::string(40, ' '));
  try {
    read_fits_memory(std::as_bytes(std::span(edge)), "edge");
  } catch (const InputError& e) {
    CHECK(std::string(e.what()).find("BLANK is") == std::string::npos);
  }
}

TEST_CASE("fits hostile: a table's column name with its \"=\" out of place is refused before cfitsio") {
  // fits_fuzz found cfitsio 4.2's ffgtbp copying an unquoted TTYPE1 value of 70 bytes into
  // its 70-byte column name (fitsio.h's tcolumn::ttype), one past the end: glibc's fortify
  // check ended the process (tests/fuzz/corpus/fits_fuzz/fuzz-ttype-equals-in-column-10.fits,
  // whose "=" stands in column 10).
  // Its primary header's DATE card is damaged too ("DATE ???…", a name with a space, refused
  // first); with that card blank, the sentence is TTYPE1's.
  check_reproducer_refused("fuzz-ttype-equals-in-column-10.fits");
  CHECK(refusal_with_card_mended("fuzz-ttype-equals-in-column-10.fits", 7, "DATE ", "")
            .find("TTYPE1 has its value indicator \"=\" in column 10") != std::string::npos);

  // The same fault with "=" in column 9: tests/imaging/fits_test.cpp.
}

TEST_CASE("fits hostile: a keyword name with a space inside it is refused, whatever the keyword") {
  // fits_fuzz found cfitsio 4.2 taking the card "ZTILE2 SIMPLE  = ." as ZTILE2 (the name
  // up to the space) without a value, and dividing by a tile size of 0 in
  // imcomp_get_compressed_image_par: SIGFPE, in the Release build too
  // (tests/fuzz/corpus/fits_fuzz/fuzz-ztile-space-in-name.fits).
  CHECK(check_reproducer_refused("fuzz-ztile-space-in-name.fits")
            .find("the keyword name \"ZTILE2 S\" holds a space after ZTILE2") != std::string::npos);
  // fits_disk_fuzz found "ZNAME2 $= 'BYTEPIX '": cfitsio took it as ZNAME2, read ZVAL2 as
  // the Rice BYTEPIX, an integer, and overflowed ffc2j's message buffer on its 56 digits
  // (Release `inspect` exited 134). ZNAMEn is no keyword cfitsio converts, so the rule is
  // for every name. The file found also ends its primary header with a damaged card,
  // "END    (", refused first; with that card a clean END the sentence is ZNAME2's (and
  // the build before this rule aborted on it).
  check_reproducer_refused("fuzz-zname-space-in-name.fits");
  CHECK(refusal_with_card_mended("fuzz-zname-space-in-name.fits", 10, "END    (", "END")
            .find("the keyword name \"ZNAME2 $\" holds a space after ZNAME2") != std::string::npos);
}

TEST_CASE("fits hostile: a keyword cfitsio reads as a value needs \"=\" in column 9, even when another \"=\" follows") {
  // fits_disk_fuzz found cfitsio 4.2 reading "ZVAL1 <spaces> CRVAL2 = 0.0" as ZVAL1 = 0:
  // the Rice block size of a tile-compressed image (ZNAME1 = 'BLOCKSIZE'), which it divided
  // by on entering the HDU (SIGFPE in imcomp_calc_max_elem; Release `inspect` exited 136).
  CHECK(check_reproducer_refused("fuzz-zval-value-after-later-equals.fits")
            .find("ZVAL1 has no value indicator \"= \" in columns 9–10") != std::string::npos);
  // The same card with the value indicator in place and a positive block size is read
  // past this check (the file has other faults, so only the sentence is compared).
  std::string bytes = slurp(occulta::test::source_path("tests/fuzz/corpus/fits_fuzz/fuzz-zval-value-after-later-equals.fits"));
  const std::size_t card = bytes.find("ZVAL1 ");
  REQUIRE(card != std::string::npos);
  bytes.replace(card, 80, (std::string("ZVAL1   =                   32") + std::string(80, ' ')).substr(0, 80));
  try {
    read_fits_memory(std::as_bytes(std::span(bytes)), "memory");
  } catch (const InputError& e) {
    CHECK(std::string(e.what()).find("ZVAL1") == std::string::npos);
  }
}

TEST_CASE("fits hostile: checksums are verified, a mismatch refused unless the policy says warn") {
  const fs::path dir = scratch_dir("fits_hostile_checksum");
  // Float32 in the primary HDU: one pixel's bytes changed.
  const fs::path plain = frame(dir, "plain.fits");
  CHECK_NOTHROW(read_fits(plain));
  std::string bytes = slurp(plain);
  const auto [start, end] = data_span(plain, 1);
  bytes[static_cast<std::size_t>(start + 40)] ^= 0x10;
  spit(dir / "plain-damaged.fits", bytes);
  const std::string message = refusal(dir / "plain-damaged.fits");
  check_one_sentence(message, (dir / "plain-damaged.fits").string());
  CHECK(message.find("DATASUM") != std::string::npos);

  // Rice-compressed: 64 bytes inside a tile flipped (the case: 225 pixels changed
  // silently). The checksum is checked before any tile is decoded.
  FitsWriteOptions rice;
  rice.rice = true;
  const fs::path compressed = frame(dir, "rice.fits", rice);
  std::string tiles = slurp(compressed);
  const auto [tile_start, tile_end] = data_span(compressed, 2);
  REQUIRE(tile_end - tile_start > 128);
  for (long long i = tile_end - 100; i < tile_end - 36; ++i) tiles[static_cast<std::size_t>(i)] ^= 0x5a;
  spit(dir / "rice-damaged.fits", tiles);
  CHECK(refusal(dir / "rice-damaged.fits").find("DATASUM") != std::string::npos);

  // Downgraded: the file is read, one sentence goes to the warning sink.
  std::vector<std::string> warnings;
  set_checksum_policy(ChecksumPolicy::Warn, [&](const std::string& text) { warnings.push_back(text); });
  CHECK_NOTHROW(read_fits(dir / "plain-damaged.fits"));
  set_checksum_policy(ChecksumPolicy::Refuse, [](const std::string&) {});
  REQUIRE(warnings.size() == 1);
  check_one_sentence(warnings[0], (dir / "plain-damaged.fits").string());
  CHECK_THROWS_AS(read_fits(dir / "plain-damaged.fits"), InputError);
}

TEST_CASE("fits hostile: gzip-compressed frames read as their plain bytes; trailing bytes beyond the headers' account are refused") {
  const fs::path dir = scratch_dir("fits_hostile_gzip");
  const fs::path plain = frame(dir, "plain.fits");
  spit(dir / "frame.fits.gz", gzip(slurp(plain)));
  const auto a = read_fits(plain), b = read_fits(dir / "frame.fits.gz");
  CHECK(cv::norm(a.pixels, b.pixels, cv::NORM_INF) == 0.0);
  CHECK(occulta::imaging::read_fits_header(dir / "frame.fits.gz").text("DATE-OBS") == "2031-03-04T07:00:00.000");
  // A few blocks of special records after the last HDU are allowed (FITS Standard 4.0 §3.5).
  spit(dir / "trailing.fits.gz", gzip(slurp(plain), 2 * 2880));
  CHECK_NOTHROW(read_fits(dir / "trailing.fits.gz"));
  // Truncated and damaged streams: one sentence each.
  const std::string whole = gzip(slurp(plain));
  spit(dir / "truncated.fits.gz", whole.substr(0, whole.size() / 2));
  check_one_sentence(refusal(dir / "truncated.fits.gz"), (dir / "truncated.fits.gz").string());
  std::string damaged = whole;
  for (std::size_t i = 20; i < 60; ++i) damaged[i] = static_cast<char>(~damaged[i]);
  spit(dir / "damaged.fits.gz", damaged);
  check_one_sentence(refusal(dir / "damaged.fits.gz"), (dir / "damaged.fits.gz").string());
  // Compressed twice.
  spit(dir / "twice.fits.gz", gzip(whole));
  CHECK(refusal(dir / "twice.fits.gz").find("twice") != std::string::npos);
}

TEST_CASE("fits hostile: a gzip bomb is refused within 1 s and 200 MB") {
  const fs::path dir = scratch_dir("fits_hostile_gzip_bomb");
  // A 16×16 frame followed by 512 MiB of zeros: about 0.5 MB of gzip. cfitsio alone
  // uncompressed all of it into memory (the issue saw 4 GB and 56 s for 4 GB of zeros).
  const fs::path bomb = dir / "bomb.fits.gz";
  spit(bomb, gzip(slurp(frame(dir, "small.fits")), std::size_t{512} << 20));
  CHECK(fs::file_size(bomb) < 1'000'000);
  // In a child process, so that its peak memory is its own (getrusage of the child,
  // POSIX wait4): the reader must refuse, quickly and in little memory.
  // What this process holds already (resident pages, /proc/self/statm field 2, proc(5)):
  // the child starts with it, and the bound is on what reading adds.
  long resident_pages = 0, ignored = 0;
  if (FILE* statm = std::fopen("/proc/self/statm", "r")) {
    REQUIRE(std::fscanf(statm, "%ld %ld", &ignored, &resident_pages) == 2);
    std::fclose(statm);
  }
  const long before_kb = resident_pages * (sysconf(_SC_PAGESIZE) / 1024);
  const auto started = std::chrono::steady_clock::now();
  const pid_t child = fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    int code = 3;
    try {
      read_fits(bomb);
      code = 2;
    } catch (const InputError& e) {
      code = std::string(e.what()).find("more bytes than its FITS headers account for") != std::string::npos ? 0 : 1;
    }
    _exit(code);
  }
  int status = 0;
  rusage usage{};
  REQUIRE(wait4(child, &status, 0, &usage) == child);
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  REQUIRE(WIFEXITED(status));
  CHECK(WEXITSTATUS(status) == 0);  // refused with the bound's sentence
  // CPU time, not the wall clock, so that a loaded machine cannot fail the check.
  const double cpu_s = usage.ru_utime.tv_sec + usage.ru_stime.tv_sec +
                       1e-6 * static_cast<double>(usage.ru_utime.tv_usec + usage.ru_stime.tv_usec);
  CHECK(cpu_s < 1.0);
  CHECK(usage.ru_maxrss - before_kb < 200 * 1024);  // kilobytes (getrusage(2) on Linux)
  MESSAGE("gzip bomb refused in " << cpu_s << " s of CPU (" << seconds << " s on the clock), peak " << usage.ru_maxrss / 1024 << " MB, of which "
                                  << before_kb / 1024 << " MB held before");
}
