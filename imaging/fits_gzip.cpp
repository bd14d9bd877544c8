// imaging/fits_gzip.cpp — a gzip-compressed FITS file (a whole file compressed, RFC 1952)
// uncompressed with zlib under a bound that its own FITS headers set.
//
// Why not cfitsio: it uncompresses such a file whole into memory before anything can be
// checked, so 17 MB of gzip holding a 16×16 image and 4 GB of zeros took 4 GB and 56 s.
// Here the bytes are walked HDU by HDU as they come out (FITS Standard 4.0 §4.4.1.1: an
// HDU's data are |BITPIX|/8 × GCOUNT × (PCOUNT + NAXIS1 × … × NAXISn) bytes, padded to
// 2880-byte blocks, §3.3.2): what follows the last HDU may be a few special records
// (§3.5), never more than kTrailingBytes, and nothing exceeds kMaxGzipBytes. The bytes
// then go to read_fits_memory() like any file held in memory.
#include <algorithm>
#include <array>
#include <charconv>
#include <cstdio>
#include <memory>
#include <optional>
#include <string_view>

#include <zlib.h>

#include "imaging/fits_cfitsio.hpp"
#include "imaging/input_error.hpp"

namespace occulta::imaging::fits_detail {

namespace {

constexpr std::size_t kBlock = 2880;
constexpr std::size_t kTrailingBytes = 10 * kBlock;

// Walks the HDUs of the bytes uncompressed so far and says how many bytes the file can
// hold at most, as far as is known: `limit` grows as each header arrives.
struct HduWalk {
  std::size_t next_hdu = 0;      // offset of the next HDU's header
  bool finished = false;         // the bytes at next_hdu begin no HDU: only trailing records follow
  std::size_t limit = kBlock * 1000;  // before the first header is whole: a header's worth
  // The header being scanned: how far, and what it said so far.
  std::size_t scanned = 0;
  long long bitpix = 0, naxis = 0, pcount = 0, gcount = 1;
  bool groups = false;
  std::array<long long, 1000> axes{};

  // Integer value of a card, when it holds one (the reader checks the header in full later).
  static std::optional<long long> integer(std::string_view card) {
    if (card.size() < 10 || card[8] != '=') return std::nullopt;
    std::string_view value = card.substr(10);
    value = value.substr(0, value.find('/'));
    while (!value.empty() && value.front() == ' ') value.remove_prefix(1);
    while (!value.empty() && value.back() == ' ') value.remove_suffix(1);
    if (!value.empty() && value.front() == '+') value.remove_prefix(1);
    long long number = 0;
    const auto [end, error] = std::from_chars(value.data(), value.data() + value.size(), number);
    if (error != std::errc() || end != value.data() + value.size()) return std::nullopt;
    return number;
  }

  // Advances over every HDU whose header is whole in `bytes`.
  void advance(std::string_view bytes) {
    while (!finished) {
      if (bytes.size() < next_hdu + 80) return;
      const std::string_view first = bytes.substr(next_hdu, 8);
      if (first != (next_hdu == 0 ? "SIMPLE  " : "XTENSION")) {
        finished = true;
        limit = next_hdu + kTrailingBytes;
        return;
      }
      // The header: cards up to END, within 1000 blocks; the scan resumes where the
      // previous call stopped, so that a long header costs one pass, not one per chunk.
      if (scanned < next_hdu) {
        scanned = next_hdu;
        bitpix = naxis = pcount = 0;
        gcount = 1;
        groups = false;
        axes.fill(0);
      }
      std::size_t& at = scanned;
      bool whole = false;
      for (; at + 80 <= bytes.size() && at < next_hdu + 1000 * kBlock; at += 80) {
        const std::string_view card = bytes.substr(at, 80);
        std::string_view key = card.substr(0, 8);
        while (!key.empty() && key.back() == ' ') key.remove_suffix(1);
        if (key == "END") {
          whole = true;
          break;
        }
        const std::optional<long long> value = integer(card);
        if (key == "BITPIX" && value) bitpix = *value;
        else if (key == "NAXIS" && value) naxis = *value;
        else if (key == "PCOUNT" && value) pcount = *value;
        else if (key == "GCOUNT" && value) gcount = *value;
        else if (key == "GROUPS") groups = card.size() > 29 && card[29] == 'T';
        else if (key.size() > 5 && key.starts_with("NAXIS") && value) {
          int axis = 0;
          const auto [end, error] = std::from_chars(key.data() + 5, key.data() + key.size(), axis);
          if (error == std::errc() && end == key.data() + key.size() && axis >= 1 && axis <= 999) axes[axis] = *value;
        }
      }
      if (!whole) {
        // A header without END within its bound, or not yet whole: the reader says which.
        limit = std::max(limit, next_hdu + 1000 * kBlock + kTrailingBytes);
        if (at >= next_hdu + 1000 * kBlock) finished = true;
        return;
      }
      const std::size_t data_start = (at + 80 + kBlock - 1) / kBlock * kBlock;
      scanned = 0;  // the next header starts afresh
      // Data size, clamped: anything near the cap is refused as too large anyway.
      long double elements = 0;
      if (naxis > 0 && naxis <= 999) {
        elements = 1;
        for (long long axis = (groups && axes[1] == 0) ? 2 : 1; axis <= naxis; ++axis)
          elements *= static_cast<long double>(std::max(0LL, axes[static_cast<std::size_t>(axis)]));
      }
      const long double data = static_cast<long double>(std::abs(bitpix) / 8) * std::max(0LL, gcount) *
                               (static_cast<long double>(std::max(0LL, pcount)) + elements);
      if (data > static_cast<long double>(kMaxGzipBytes)) {
        limit = kMaxGzipBytes;  // refused as soon as the stream passes it
        finished = true;
        return;
      }
      const std::size_t padded = (static_cast<std::size_t>(data) + kBlock - 1) / kBlock * kBlock;
      next_hdu = data_start + padded;
      limit = next_hdu + kTrailingBytes;
    }
  }
};

}  // namespace

std::vector<std::byte> gunzip_fits(std::FILE* file, const std::string& source) {
  z_stream stream{};
  // 16 + MAX_WBITS: the gzip wrapper of RFC 1952 (zlib manual, inflateInit2).
  if (inflateInit2(&stream, 16 + MAX_WBITS) != Z_OK) throw InputError(source, "zlib cannot start uncompressing it");
  const std::unique_ptr<z_stream, int (*)(z_stream*)> end_stream(&stream, inflateEnd);

  std::vector<std::byte> out;
  HduWalk walk;
  std::vector<unsigned char> input(1 << 16);
  std::array<unsigned char, 1 << 16> chunk{};
  bool stream_end = false, eof = false;
  while (true) {
    if (stream.avail_in == 0 && !eof) {
      const std::size_t got = std::fread(input.data(), 1, input.size(), file);
      eof = got == 0;
      stream.next_in = input.data();
      stream.avail_in = static_cast<uInt>(got);
    }
    if (stream_end) {
      if (stream.avail_in == 0) {
        if (eof) break;
        continue;
      }
      // RFC 1952 §2.2: a gzip file may hold several members one after another; bytes
      // that begin no member are ignored, as gzip(1) does with trailing zeros.
      if (stream.next_in[0] != 0x1f) break;
      inflateReset(&stream);
      stream_end = false;
    }
    stream.next_out = chunk.data();
    stream.avail_out = static_cast<uInt>(chunk.size());
    const int status = inflate(&stream, Z_NO_FLUSH);
    if (status != Z_OK && status != Z_STREAM_END && status != Z_BUF_ERROR)
      throw InputError(source, std::string("its gzip compression is damaged (zlib: ") +
                                   (stream.msg ? stream.msg : "error " + std::to_string(status)) + ")");
    const std::size_t produced = chunk.size() - stream.avail_out;
    if (status == Z_STREAM_END) stream_end = true;
    else if (produced == 0 && stream.avail_in == 0 && eof) break;  // truncated: said below
    const auto* bytes = reinterpret_cast<const std::byte*>(chunk.data());
    out.insert(out.end(), bytes, bytes + produced);
    walk.advance(std::string_view(reinterpret_cast<const char*>(out.data()), out.size()));
    if (out.size() > std::min(walk.limit, kMaxGzipBytes))
      throw InputError(source, out.size() > kMaxGzipBytes
                                   ? "uncompressed, it would hold more than " + std::to_string(kMaxGzipBytes) +
                                         " bytes, more than occulta reads from a gzip file"
                                   : "uncompressed, it holds more bytes than its FITS headers account for (more than " +
                                         std::to_string(walk.limit) +
                                         "), so it is damaged or made to exhaust memory (a gzip bomb)");
  }
  if (!stream_end) throw InputError(source, "its gzip compression is truncated: the compressed stream has no end");
  return out;
}

}  // namespace occulta::imaging::fits_detail
