// imaging/fits_rice_check.cpp — traces the tiles of a tile-compressed image before
// cfitsio decodes them (why: imaging/fits_rice_check.hpp).
//
// The Rice stream (Pence, Seaman & White 2009, "Lossless Astronomical Image Compression
// and the Effects of Noise", PASP 121, 414 — §3 and the tiled-image convention; the layout
// is the one cfitsio writes and reads): the first value stored raw, big-endian, in BYTEPIX
// bytes; then, bits most significant first, for each block of BLOCKSIZE values (the last
// block of a tile shorter) a code of fsbits = 3, 4 or 5 bits (8-, 16-, 32-bit data) that
// holds fs + 1:
//   fs = −1          low-entropy block: every difference is zero, no further bits;
//   fs = fsmax       high-entropy block (fsmax = 6, 14, 25): every mapped difference is
//                    stored raw in 8, 16 or 32 bits;
//   0 ≤ fs < fsmax   each mapped difference d is coded as d >> fs in unary (that many 0
//                    bits, then a 1) followed by the fs low bits of d.
// A mapped difference is the zig-zag map of one value minus the one before (first value
// included), so it always fits the data's width: a longer unary code is damage. Nothing
// is written: the trace only counts bits, and checks each read against the tile's end.
#include "imaging/fits_rice_check.hpp"

#include <algorithm>
#include <array>
#include <bit>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>

#include <cpuid.h>
#include <zlib.h>

#include "imaging/fits_cfitsio.hpp"
#include "imaging/input_error.hpp"

namespace occulta::imaging::fits_detail {

namespace {

// Bits of a byte string, most significant first, through a 64-bit buffer refilled a
// word at a time (a decoder's usual reader; the trace runs on every compressed read).
class BitReader {
 public:
  BitReader(const unsigned char* data, std::size_t size) : data_(data), size_(size) {}

  std::uint64_t position() const { return std::uint64_t{next_} * 8 - static_cast<std::uint64_t>(available_); }

  // Makes at least 56 bits available, or all that remain.
  [[gnu::always_inline]] void refill() {
    if (next_ + 8 <= size_) {
      std::uint64_t word = 0;
      std::memcpy(&word, data_ + next_, 8);
      if constexpr (std::endian::native == std::endian::little) word = __builtin_bswap64(word);
      // Bits past the available ones are already the stream's next bits or zeros, so
      // OR-ing the word in again is harmless; only whole bytes are counted as taken.
      buffer_ |= word >> available_;
      next_ += static_cast<std::size_t>(63 - available_) >> 3;
      available_ |= 56;
    } else {
      while (available_ < 56 && next_ < size_) {  // at most 63 after: consume() < 64
        buffer_ |= std::uint64_t{data_[next_++]} << (56 - available_);
        available_ += 8;
      }
    }
  }

  // The buffer, left-aligned: available() bits are the stream's, those after them the
  // stream's next bits or zeros.
  std::uint64_t bits() const { return buffer_; }
  int available() const { return available_; }
  void consume(int count) {  // count ≤ available() < 64
    buffer_ <<= count;
    available_ -= count;
  }

 private:
  const unsigned char* data_;
  std::size_t size_;
  std::size_t next_ = 0;  // next byte to load
  std::uint64_t buffer_ = 0;
  int available_ = 0;
};

std::string count_of(long long n, const char* one, const char* many) {
  return std::to_string(n) + " " + (n == 1 ? one : many);
}

}  // namespace

namespace {

// The one walk through a Rice stream that both the trace and the decoder take, so that
// decoding carries every check the trace makes. `put` receives each pixel's mapped
// difference (0 for a low-entropy block's pixels); the trace passes a sink that does
// nothing, and the compiler drops the arithmetic that feeds it.
// `put` is taken by value: its state (the decoder's last value and place) is then the
// walk's own, held in registers, rather than read and written through a reference for
// every pixel (measured: read_fits of a 1024² Rice frame 4.0 → 3.6 ms).
template <bool kValues, typename Put>
[[gnu::always_inline]] inline RiceTrace walk_rice(std::span<const unsigned char> bytes, long long pixels, int blocksize,
                                                  int bytepix, Put put) {
  // cfitsio's decoders: fits_rdecomp_byte for BYTEPIX 1, fits_rdecomp_short for 2, and
  // fits_rdecomp (32-bit) for anything else; the code widths and fsmax are the paper's.
  int fsbits = 5, fsmax = 25, bbits = 32;
  if (bytepix == 1) {
    fsbits = 3, fsmax = 6, bbits = 8;
  } else if (bytepix == 2) {
    fsbits = 4, fsmax = 14, bbits = 16;
  } else {
    bytepix = 4;
  }
  RiceTrace trace;
  const std::size_t first = static_cast<std::size_t>(bytepix);
  if (bytes.size() < first) {
    trace.bytes_used = first;
    trace.problem = "it has " + count_of(static_cast<long long>(bytes.size()), "byte", "bytes") +
                    ", fewer than the " + std::to_string(bytepix) + " of its first value";
    return trace;
  }
  BitReader bits(bytes.data() + first, bytes.size() - first);
  const std::uint64_t widest = (std::uint64_t{1} << bbits) - 1;  // largest mapped difference
  long long done = 0;                                              // values traced so far
  // The failures are told the reader's position rather than shown the reader: a reader
  // whose address a (not inlined) lambda holds lives in memory, and its buffer was stored
  // and loaded again for every pixel.
  auto fail = [&](std::string problem, std::uint64_t position) {
    trace.bytes_used = first + static_cast<std::size_t>((position + 7) / 8);
    trace.problem = std::move(problem);
    return trace;
  };
  auto past_end = [&](std::uint64_t position) {
    return fail("its codes run past the end of its " + count_of(static_cast<long long>(bytes.size()), "byte", "bytes") +
                    " at pixel " + std::to_string(done + 1) + " of " + std::to_string(pixels),
                position);
  };
  auto too_wide = [&](long long index, std::uint64_t position) {
    return fail("pixel " + std::to_string(index + 1) + " has a difference wider than the " + std::to_string(bbits) +
                    " bits of its data",
                position);
  };

  // Skips `count` bits, or says they are not there.
  auto skip = [&](std::uint64_t count) __attribute__((always_inline)) {
    while (count > 0) {
      bits.refill();
      const int take = static_cast<int>(std::min<std::uint64_t>(count, static_cast<std::uint64_t>(bits.available())));
      if (take == 0) return false;
      bits.consume(take);
      count -= static_cast<std::uint64_t>(take);
    }
    return true;
  };
  // Reads the next `count` (≤ 32) bits as a number, or says they are not there.
  auto take = [&](int count, std::uint64_t& value) __attribute__((always_inline)) {
    if (count == 0) return value = 0, true;
    bits.refill();
    if (bits.available() < count) return false;
    value = bits.bits() >> (64 - count);
    bits.consume(count);
    return true;
  };

  while (done < pixels) {
    const long long block = std::min<long long>(blocksize, pixels - done);
    bits.refill();
    if (bits.available() < fsbits) return past_end(bits.position());
    const int fs = static_cast<int>(bits.bits() >> (64 - fsbits)) - 1;
    bits.consume(fsbits);
    if (fs < 0) {
      // Low-entropy block: no bits follow, every difference is zero.
      if constexpr (kValues)
        for (long long i = 0; i < block; ++i) put(0);
    } else if (fs == fsmax) {
      if constexpr (kValues) {
        for (long long i = 0; i < block; ++i) {
          std::uint64_t raw = 0;
          if (!take(bbits, raw)) return past_end(bits.position());
          put(static_cast<std::uint32_t>(raw));
        }
      } else if (!skip(static_cast<std::uint64_t>(block) * static_cast<std::uint64_t>(bbits))) {
        return past_end(bits.position());
      }
    } else if (fs > fsmax) {
      // Only 32-bit codes have room for this (5 bits hold up to 30).
      return fail("the block at pixel " + std::to_string(done + 1) + " asks for " + std::to_string(fs) +
                      " low bits, more than the " + std::to_string(fsmax) + " a Rice code of " + std::to_string(bbits) +
                      "-bit data can have",
                  bits.position());
    } else {
      const std::uint64_t most_zeros = widest >> fs;  // (zeros << fs) | low bits ≤ widest
      const int tail = fs + 1;                         // the unary code's 1, then fs bits
      for (long long i = 0; i < block; ++i) {
        if (bits.available() < 32) bits.refill();
        // Common case: the unary code and the low bits are in the buffer.
        if (const std::uint64_t word = bits.bits(); word != 0) {
          const int zeros = std::countl_zero(word);
          if (zeros + tail <= bits.available()) {
            if (static_cast<std::uint64_t>(zeros) > most_zeros) return too_wide(done + i, bits.position());
            if constexpr (kValues) {
              // zeros + 1 ≤ 63 here, so both shifts are defined.
              const std::uint64_t low = fs == 0 ? 0 : (word << (zeros + 1)) >> (64 - fs);
              put(static_cast<std::uint32_t>((static_cast<std::uint64_t>(zeros) << fs) | low));
            }
            bits.consume(zeros + tail);
            continue;
          }
        }
        // A long unary code, or the tile's last bits: count zeros buffer by buffer.
        std::uint64_t zeros = 0;
        for (;;) {
          bits.refill();
          const int available = bits.available();
          if (available == 0) return past_end(bits.position());
          const int leading = std::countl_zero(bits.bits());  // 64 when the buffer is 0
          if (leading < available) {
            zeros += static_cast<std::uint64_t>(leading);
            bits.consume(leading + 1);
            break;
          }
          zeros += static_cast<std::uint64_t>(available);
          bits.consume(available);
          if (zeros > most_zeros) return too_wide(done + i, bits.position());
        }
        if (zeros > most_zeros) return too_wide(done + i, bits.position());
        if constexpr (kValues) {
          std::uint64_t low = 0;
          if (!take(fs, low)) return past_end(bits.position());
          put(static_cast<std::uint32_t>((zeros << fs) | low));
        } else if (!skip(static_cast<std::uint64_t>(fs))) {
          return past_end(bits.position());
        }
      }
    }
    done += block;
  }
  trace.bytes_used = first + static_cast<std::size_t>((bits.position() + 7) / 8);
  return trace;
}

}  // namespace

RiceTrace trace_rice(std::span<const unsigned char> bytes, long long pixels, int blocksize, int bytepix) {
  return walk_rice<false>(bytes, pixels, blocksize, bytepix, [](std::uint32_t) {});
}

namespace {

// The decoder, whole (decode_rice says what it does). Always inlined, with walk_rice, into
// the two builds of it below.
[[gnu::always_inline]] inline RiceTrace decode(std::span<const unsigned char> bytes, long long pixels, int blocksize,
                                               int bytepix, std::int32_t* values) {
  // The first value, big-endian in BYTEPIX bytes (4 for anything but 1 and 2, as above);
  // then each pixel is the one before plus its difference, in the data's width: the
  // zig-zag map undone (even d → d/2, odd d → −(d+1)/2, i.e. ~(d >> 1)) and the sum taken
  // modulo 2^bits, as the coder formed the differences (Pence et al. 2009 §3).
  const int width = bytepix == 1 ? 1 : bytepix == 2 ? 2 : 4;
  std::uint32_t last = 0;
  for (int i = 0; i < width && i < static_cast<int>(bytes.size()); ++i) last = (last << 8) | bytes[static_cast<std::size_t>(i)];
  // One walk per width, so that the width is a constant in the loop over pixels.
  const auto walk = [&]<int kWidth>() __attribute__((always_inline)) {
    return walk_rice<true>(bytes, pixels, blocksize, bytepix, [last, value = values](std::uint32_t mapped) mutable {
      const std::uint32_t difference = (mapped & 1u) ? ~(mapped >> 1) : (mapped >> 1);
      last += difference;  // modulo 2^32; the store keeps the data's width
      if constexpr (kWidth == 1)
        *value++ = static_cast<std::int32_t>(last & 0xFFu);  // unsigned 8-bit data
      else if constexpr (kWidth == 2)
        *value++ = static_cast<std::int16_t>(static_cast<std::uint16_t>(last));  // signed 16-bit
      else
        *value++ = static_cast<std::int32_t>(last);  // signed 32-bit
    });
  };
  if (width == 1) return walk.operator()<1>();
  if (width == 2) return walk.operator()<2>();
  return walk.operator()<4>();
}

// The same, built with LZCNT (a code's leading zeros counted in one instruction, where the
// baseline's BSR takes several) and BMI2's shifts by a register: 3.6 → 3.25 ms to read a
// 1024² Rice frame. Integer steps only, so the same values.
[[gnu::target("lzcnt,bmi,bmi2")]] RiceTrace decode_lzcnt(std::span<const unsigned char> bytes, long long pixels,
                                                        int blocksize, int bytepix, std::int32_t* values) {
  return decode(bytes, pixels, blocksize, bytepix, values);
}

// Whether the CPU has LZCNT (CPUID leaf 0x80000001, ECX bit 5; on a CPU without it the
// instruction runs as BSR, which counts from the other end) and BMI1/BMI2.
bool has_lzcnt_bmi2() {
  unsigned a = 0, b = 0, c = 0, d = 0;
  const bool lzcnt = __get_cpuid(0x80000001u, &a, &b, &c, &d) && (c & (1u << 5)) != 0;
  return lzcnt && __builtin_cpu_supports("bmi") && __builtin_cpu_supports("bmi2");
}

}  // namespace

RiceTrace decode_rice(std::span<const unsigned char> bytes, long long pixels, int blocksize, int bytepix,
                      std::int32_t* values) {
  static const bool fast = has_lzcnt_bmi2();
  return fast ? decode_lzcnt(bytes, pixels, blocksize, bytepix, values) : decode(bytes, pixels, blocksize, bytepix, values);
}

namespace {

[[noreturn]] void fail(const std::string& source, const std::string& what, int status) {
  throw InputError(source, what + ": " + describe_status(status));
}

// A header text as part of a sentence: bytes outside printable ASCII shown as '?'.
std::string printable(std::string text) {
  for (char& c : text)
    if (c < ' ' || c > '~') c = '?';
  return text;
}

}  // namespace

namespace {

// Whether decode_rice() can give the pixels fits_read_img(TFLOAT) gives for this image:
// integer data coded at their own width (cfitsio then decodes into that type and converts
// each value v to float as (float)(v · BSCALE + BZERO), NaN where v equals the BLANK or
// ZBLANK keyword), one plane, no quantisation and no per-tile null column. Anything else
// is left to cfitsio after the trace.
bool decodable(const FITSfile& layout) {
  const bool width_matches = (layout.zbitpix == BYTE_IMG && layout.rice_bytepix == 1) ||
                             (layout.zbitpix == SHORT_IMG && layout.rice_bytepix == 2) ||
                             (layout.zbitpix == LONG_IMG && layout.rice_bytepix == 4);
  const bool one_plane = layout.zndim == 2 || (layout.zndim == 3 && layout.znaxis[2] == 1);
  return layout.compress_type == RICE_1 && width_matches && one_plane && layout.cn_zscale == 0 &&
         layout.cn_zzero == 0 && layout.cn_zblank <= 0 && layout.cn_uncompressed <= 0 && layout.cn_gzip_data <= 0;
}

// One run of decoded values as fits_read_img(TFLOAT) gives them: (float)(v · BSCALE +
// BZERO), NaN where v is the BLANK value (FITS Standard 4.0 §4.4.2.5). Returns how many
// it wrote that are not finite: the blanks, and where `may_overflow` also the values
// beyond float's range (±Inf) or made NaN by the scaling, counted on the bits (NaN and
// ±Inf have all exponent bits set, IEEE 754-2008 §3.4). Written with locals and no early
// exit so that the compiler vectorises it; counting blanks alone is the faster loop
// (measured: 0.56 against 0.94 ms for a 1024² frame).
std::size_t to_physical(const std::int32_t* __restrict values, long long count, bool blank, std::int32_t blank_value,
                        double scale, double zero, bool may_overflow, float* __restrict out) {
  const float nan = std::numeric_limits<float>::quiet_NaN();
  std::uint32_t nonfinite = 0;  // a tile row holds far fewer than 2³² pixels
  if (may_overflow) {
    for (long long x = 0; x < count; ++x) {
      const float v = blank && values[x] == blank_value ? nan : static_cast<float>(values[x] * scale + zero);
      out[x] = v;
      nonfinite += (std::bit_cast<std::uint32_t>(v) & 0x7f800000u) == 0x7f800000u;
    }
  } else {
    for (long long x = 0; x < count; ++x) {
      const bool is_blank = blank && values[x] == blank_value;
      out[x] = is_blank ? nan : static_cast<float>(values[x] * scale + zero);
      nonfinite += is_blank;
    }
  }
  return nonfinite;
}

// A GZIP_1 or GZIP_2 tile (or a GZIP_COMPRESSED_DATA one): its gzip stream (RFC 1952,
// as cfitsio 4.2's uncompress2mem_from_mem opens it: inflateInit2 with 16 + MAX_WBITS)
// must end within its bytes and unpack to at most max_bytes. cfitsio grows its buffer for
// as long as a stream gives bytes (an 11 kB tile ran for minutes and took 360 MB under
// fits_fuzz) and leaks it on a damaged stream, so the stream is inflated here first, into
// a scratch buffer, and counted. Returns the fault as a phrase, empty when there is none.
std::string check_gzip_tile(std::span<const unsigned char> bytes, long long max_bytes) {
  z_stream stream{};
  if (inflateInit2(&stream, 16 + MAX_WBITS) != Z_OK) return "zlib cannot start uncompressing it";
  std::array<unsigned char, 1 << 15> scratch{};
  stream.next_in = const_cast<unsigned char*>(bytes.data());
  stream.avail_in = static_cast<uInt>(std::min<std::size_t>(bytes.size(), std::numeric_limits<uInt>::max()));
  long long produced = 0;
  std::string problem;
  while (problem.empty()) {
    stream.next_out = scratch.data();
    stream.avail_out = static_cast<uInt>(scratch.size());
    const int status = inflate(&stream, Z_NO_FLUSH);
    produced += static_cast<long long>(scratch.size() - stream.avail_out);
    if (produced > max_bytes)
      problem = "its gzip stream unpacks to more than the " + std::to_string(max_bytes) + " bytes its pixels can hold";
    else if (status == Z_STREAM_END)
      break;
    else if (status == Z_BUF_ERROR || (status == Z_OK && stream.avail_in == 0 && stream.avail_out != 0))
      problem = "its gzip stream is cut short";
    else if (status != Z_OK)
      problem = std::string("its gzip stream is damaged (zlib: ") + (stream.msg ? stream.msg : "error") + ")";
  }
  inflateEnd(&stream);
  return problem;
}

std::vector<TileCheck> check_tiles(fitsfile* file, const std::string& source, const std::string& where, float* pixels,
                                   bool& decoded, std::size_t& nonfinite) {
  // What cfitsio parsed on entering the HDU (public in fitsio.h) is what its decoders
  // will use, so the check takes the same values rather than reading the keywords again:
  // the compression type (ZCMPTYPE, RICE_ONE taken as RICE_1), image and tile axes
  // (ZNAXISn, ZTILEn with their defaults), BLOCKSIZE and BYTEPIX (ZNAMEn/ZVALn, default
  // 32 and 4 — cfitsio keeps 4 for 16-bit data written without BYTEPIX, and decodes such
  // a tile as 32-bit), and the columns it reads tiles from.
  const FITSfile& layout = *file->Fptr;
  const int type = layout.compress_type;
  if (type != RICE_1 && type != GZIP_1 && type != GZIP_2) {
    // HCOMPRESS_1 and PLIO_1 have hand-written decoders in cfitsio that trust their input
    // like its Rice decoder does; tracing them is a decoder's work, so they are refused.
    char name[FLEN_VALUE] = "";
    int status = 0;
    fits_read_key(file, TSTRING, "ZCMPTYPE", name, nullptr, &status);
    if (status != 0) fits_clear_errmsg();
    throw InputError(source, where + " is tile-compressed with " + (name[0] ? printable(name) : std::string("an unnamed method")) +
                                 ", which occulta does not read (it reads RICE_1, GZIP_1 and GZIP_2 tiles)");
  }
  const int dims = layout.zndim;
  if (dims < 1 || dims > MAX_COMPRESS_DIM)
    throw InputError(source, where + " has " + std::to_string(dims) + " axes, which the tiled image convention does not allow");
  std::array<long long, MAX_COMPRESS_DIM> across{};  // tiles along each axis
  long long tiles = 1;
  for (int d = 0; d < dims; ++d) {
    const long long axis = layout.znaxis[d], tile = layout.tilesize[d];
    if (axis < 1 || tile < 1)
      throw InputError(source, where + " has a ZNAXIS" + std::to_string(d + 1) + " or ZTILE" + std::to_string(d + 1) +
                                   " that is not a positive integer (tiled image convention, Pence et al. 2009 §4)");
    across[d] = (axis + tile - 1) / tile;
    tiles *= across[d];  // at most the pixel count, which choose_image() bounded
  }
  int status = 0;
  LONGLONG rows = 0;
  fits_get_num_rowsll(file, &rows, &status);
  if (status != 0) fail(source, where + " has a compressed table whose rows cannot be counted", status);
  if (rows < tiles)
    throw InputError(source, "the file is damaged: " + where + " is made of " + std::to_string(tiles) +
                                 " tiles, and its compressed table holds only " + std::to_string(rows));
  const int blocksize = layout.rice_blocksize, bytepix = layout.rice_bytepix;
  if (type == RICE_1 && blocksize < 1)
    throw InputError(source, where + " has a Rice BLOCKSIZE of " + std::to_string(blocksize) +
                                 ", not a positive number of pixels");
  if (layout.cn_compressed < 1) throw InputError(source, where + " has no COMPRESSED_DATA column");

  std::vector<TileCheck> checks;
  checks.reserve(static_cast<std::size_t>(tiles));
  std::vector<unsigned char> bytes;
  // A tile's bytes in `column`, read the way cfitsio reads them for its decoders.
  // A tile's name in sentences, made only for a sentence (a frame has ~1000 tiles).
  const auto tile_name = [&](long long row) { return "tile " + std::to_string(row) + " of " + where; };
  const auto read_bytes = [&](int column, long long row, LONGLONG length) {
    bytes.resize(static_cast<std::size_t>(length));
    unsigned char null = 0;
    int any_null = 0;
    fits_read_col(file, TBYTE, column, row, 1, length, &null, bytes.data(), &any_null, &status);
    if (status != 0) fail(source, "the compressed bytes of " + tile_name(row) + " cannot be read", status);
  };
  // A gzip stream inflated and counted before cfitsio inflates it: at most 8 bytes a
  // pixel, the widest values a tile holds (64-bit integers or floats).
  const auto check_gzip = [&](long long row, long long tile_pixels) {
    const std::string problem = check_gzip_tile(bytes, 8 * tile_pixels);
    if (!problem.empty()) throw InputError(source, "the file is damaged: " + tile_name(row) + ": " + problem);
  };
  decoded = pixels != nullptr && decodable(layout);
  std::vector<std::int32_t> values;
  if (decoded) values.resize(static_cast<std::size_t>(layout.maxtilelen > 0 ? layout.maxtilelen : 0));
  const bool blank = layout.cn_zblank == -1;  // the BLANK or ZBLANK keyword is there
  const double scale = layout.cn_bscale, zero = layout.cn_bzero;
  // Every value v of the data's width (|v| ≤ 2³¹) scales to a finite float unless BSCALE
  // or BZERO is huge or not a number: then each pixel is checked as it is written.
  const bool may_overflow = !(std::abs(scale) * 2147483648.0 + std::abs(zero) <= std::numeric_limits<float>::max());
  for (long long row = 1; row <= tiles; ++row) {
    // Tiles are numbered along axis 1 first (Pence et al. 2009 §4); those at the far edge
    // of an axis are cut short by it.
    TileCheck check;
    check.pixels = 1;
    std::array<long long, MAX_COMPRESS_DIM> corner{}, extent{};  // the tile's first pixel and size per axis
    for (long long d = 0, index = row - 1; d < dims; ++d) {
      const long long at = index % across[d];
      index /= across[d];
      corner[d] = at * layout.tilesize[d];
      extent[d] = std::min<long long>(layout.tilesize[d], layout.znaxis[d] - corner[d]);
      check.pixels *= extent[d];
    }
    LONGLONG length = 0, offset = 0;
    fits_read_descriptll(file, layout.cn_compressed, row, &length, &offset, &status);
    if (status != 0) fail(source, "the place of " + tile_name(row) + " cannot be read", status);
    check.stored_bytes = length;
    if (length > 0) {
      read_bytes(layout.cn_compressed, row, length);
      if (type == RICE_1) {
        if (decoded && check.pixels > static_cast<long long>(values.size())) values.resize(static_cast<std::size_t>(check.pixels));
        const RiceTrace trace = decoded ? decode_rice(bytes, check.pixels, blocksize, bytepix, values.data())
                                        : trace_rice(bytes, check.pixels, blocksize, bytepix);
        if (!trace.problem.empty())
          throw InputError(source, "tile " + std::to_string(row) + " of the Rice-compressed image is damaged: " +
                                       trace.problem);
        check.traced_bytes = static_cast<long long>(trace.bytes_used);
        if (decoded) {
          // The tile's pixels run along axis 1 first (Pence et al. 2009 §4); the image's
          // row y (FITS row y + 1) starts at pixel y · NAXIS1.
          const long long image_width = layout.znaxis[0];
          const std::int32_t* value = values.data();
          for (long long y = corner[1]; y < corner[1] + extent[1]; ++y, value += extent[0])
            nonfinite += to_physical(value, extent[0], blank, layout.zblank, scale, zero, may_overflow,
                                     pixels + y * image_width + corner[0]);
        }
      }
      if (type == GZIP_1 || type == GZIP_2) check_gzip(row, check.pixels);
    } else if (layout.cn_uncompressed > 0) {
      // A tile the writer could not compress, stored as plain values (the convention's
      // UNCOMPRESSED_DATA); cfitsio copies as many as the descriptor says into the
      // tile's place, so there must be exactly one per pixel.
      fits_read_descriptll(file, layout.cn_uncompressed, row, &length, &offset, &status);
      if (status != 0) fail(source, "the place of " + tile_name(row) + " cannot be read", status);
      if (length != check.pixels)
        throw InputError(source, "the file is damaged: " + tile_name(row) + " is stored uncompressed with " +
                                     std::to_string(length) + " values for its " + std::to_string(check.pixels) +
                                     " pixels");
    } else if (layout.cn_gzip_data > 0) {
      // Stored gzip-compressed instead (GZIP_COMPRESSED_DATA, for tiles that cannot be
      // quantised): its stream is checked as a GZIP_1 tile's.
      fits_read_descriptll(file, layout.cn_gzip_data, row, &length, &offset, &status);
      if (status != 0) fail(source, "the place of " + tile_name(row) + " cannot be read", status);
      if (length < 1) throw InputError(source, "the file is damaged: " + tile_name(row) + " holds no data in any column");
      read_bytes(layout.cn_gzip_data, row, length);
      check_gzip(row, check.pixels);
    } else {
      throw InputError(source, "the file is damaged: " + tile_name(row) + " holds no data in any column");
    }
    checks.push_back(check);
  }
  return checks;
}

}  // namespace

std::vector<TileCheck> check_compressed_tiles(fitsfile* file, const std::string& source, const std::string& where) {
  bool decoded = false;
  std::size_t nonfinite = 0;
  return check_tiles(file, source, where, nullptr, decoded, nonfinite);
}

bool check_and_decode_tiles(fitsfile* file, const std::string& source, const std::string& where, float* pixels,
                            long long width, long long height, std::size_t& nonfinite) {
  const FITSfile& layout = *file->Fptr;
  const bool fits = layout.zndim >= 2 && layout.znaxis[0] == width && layout.znaxis[1] == height;
  bool decoded = false;
  nonfinite = 0;
  check_tiles(file, source, where, fits ? pixels : nullptr, decoded, nonfinite);
  return decoded;
}

}  // namespace occulta::imaging::fits_detail
