// imaging/fits_write.cpp — writing one image as FITS with cfitsio: float32 or int16 with
// BSCALE/BZERO, optionally Rice tile-compressed; and float32 cubes, whole or plane by
// plane (FitsCubeWriter). Every file appears whole or not at all.
#include <fcntl.h>
#include <unistd.h>

#include <bit>
#include <cerrno>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <functional>
#include <limits>
#include <string>
#include <system_error>
#include <vector>


#include "imaging/fits.hpp"
#include "imaging/fits_cfitsio.hpp"
#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"

namespace occulta::imaging {

namespace {

using fits_detail::FitsHandle;

// The temporary file beside the target: removed unless the write got as far as renaming.
class PendingFile {
 public:
  explicit PendingFile(std::filesystem::path path) : path_(std::move(path)) {}
  PendingFile(const PendingFile&) = delete;
  PendingFile& operator=(const PendingFile&) = delete;
  ~PendingFile() {
    if (!done_) {
      std::error_code ignored;
      std::filesystem::remove(path_, ignored);
    }
  }
  const std::filesystem::path& path() const { return path_; }
  void done() { done_ = true; }

 private:
  std::filesystem::path path_;
  bool done_ = false;
};


// The shortest of 15–17 significant digits that reads back as the same double, so a
// header value survives a round trip exactly (FITS Standard 4.0 §4.2.4 real values).
std::string format_real(double value) {
  char text[40];
  for (int digits = 15; digits <= 17; ++digits) {
    std::snprintf(text, sizeof text, "%.*G", digits, value);
    if (std::strtod(text, nullptr) == value) break;
  }
  std::string result(text);
  // A real keeps a decimal point or exponent, or it would read back as an integer.
  if (result.find_first_of(".E") == std::string::npos) result += ".0";
  return result;
}

// Header comments must be printable ASCII (§4.1.2.3); anything else becomes '?'.
std::string ascii(std::string_view text) {
  std::string result(text);
  for (char& c : result)
    if (c < 0x20 || c > 0x7e) c = '?';
  return result;
}

// The comment cards cfitsio writes in every new primary header: not copied again.
bool is_cfitsio_banner(const HeaderCard& card) {
  return card.key == "COMMENT" &&
         (card.text.starts_with("  FITS (Flexible Image Transport System) format is defined in") ||
          card.text.starts_with("  and Astrophysics', volume 376, page 359"));
}

class Writer {
 public:
  Writer(fitsfile* file, std::string source) : file_(file), source_(std::move(source)) {}

  void check(int status, const std::string& what) const {
    if (status != 0) throw InputError(source_, "it cannot be written: " + what + " failed, " + fits_detail::describe_status(status));
  }

  void card(const HeaderCard& card) {
    if (fits_detail::is_structural(card.key) || card.key == "DATE" || is_cfitsio_banner(card)) return;
    int status = 0;
    const std::string comment = ascii(card.comment);
    using Kind = HeaderCard::Kind;
    if (card.kind == Kind::Commentary) {
      const std::string text = ascii(card.text);
      if (card.key == "COMMENT") fits_write_comment(file_, text.c_str(), &status);
      else if (card.key == "HISTORY") fits_write_history(file_, text.c_str(), &status);
      else if (card.key == "CONTINUE") return;  // a continuation with nothing to continue
      else {
        std::string record = (card.key + std::string(8, ' ')).substr(0, 8) + text;
        record.resize(std::min<std::size_t>(record.size(), 80));
        fits_write_record(file_, record.c_str(), &status);
      }
      check(status, "writing a " + (card.key.empty() ? std::string("blank-keyword") : card.key) + " card");
      return;
    }
    // §4.1.2.1: a keyword is up to 8 of A–Z, 0–9, '-' and '_' (longer names go out under
    // the HIERARCH convention, which cfitsio writes itself).
    if (card.key.size() <= 8) {
      fits_test_keyword(card.key.c_str(), &status);
      if (status != 0 || card.key.empty()) {
        fits_clear_errmsg();
        throw InputError(source_, "it cannot be written: \"" + card.key +
                                      "\" is not a FITS keyword (up to 8 upper-case letters, digits, '-' or '_', "
                                      "FITS Standard 4.0 §4.1.2.1)");
      }
    }
    const char* key = card.key.c_str();
    switch (card.kind) {
      case Kind::Logical: fits_write_key_log(file_, key, card.integer != 0, comment.c_str(), &status); break;
      case Kind::Integer: fits_write_key_lng(file_, key, card.integer, comment.c_str(), &status); break;
      case Kind::Real: {
        if (!std::isfinite(card.real))
          throw InputError(source_, "it cannot be written: " + card.key + " is " + std::to_string(card.real) +
                                        ", and a FITS header holds finite numbers only (FITS Standard 4.0 §4.2.4)");
        std::string value = format_real(card.real);
        char record[FLEN_CARD] = {};
        fits_make_key(key, value.data(), comment.c_str(), record, &status);
        if (status == 0) fits_write_record(file_, record, &status);
        break;
      }
      case Kind::Text:
        // Long values continue on CONTINUE cards (§4.2.1.2); cfitsio splits them. LONGSTRN
        // announces the convention to older readers (HEASARC convention; fitsverify asks).
        if (card.text.size() > 68 && !announced_long_strings_) {
          fits_write_key_longwarn(file_, &status);
          announced_long_strings_ = true;
        }
        fits_write_key_longstr(file_, key, card.text.c_str(), comment.c_str(), &status);
        break;
      default: fits_write_key_null(file_, key, comment.c_str(), &status); break;
    }
    if (status != 0) {
      const std::string reason = fits_detail::describe_status(status);
      throw InputError(source_, "it cannot be written: the value of " + card.key +
                                    " cannot go into a FITS header (" + reason + ")");
    }
  }

 private:
  fitsfile* file_;
  std::string source_;
  bool announced_long_strings_ = false;
};

struct Quantised {
  std::vector<short> stored;
  double bscale = 1.0, bzero = 0.0;
};

constexpr short kBlank = std::numeric_limits<short>::min();

// int16 with BSCALE/BZERO (FITS Standard 4.0 §4.4.2.5, physical = BZERO + BSCALE·stored):
// the finite range maps onto −32767…32767, leaving −32768 for BLANK, which NaN and ±Inf
// become (an int16 cannot hold them). Each value is off by at most BSCALE/2.
Quantised quantise(const cv::Mat& pixels) {
  Quantised result;
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  const float* data = pixels.ptr<float>();
  const std::size_t count = pixels.total();
  for (std::size_t i = 0; i < count; ++i)
    if (std::isfinite(data[i])) {
      lo = std::min<double>(lo, data[i]);
      hi = std::max<double>(hi, data[i]);
    }
  if (lo <= hi) {
    result.bzero = 0.5 * (lo + hi);
    result.bscale = hi > lo ? (hi - lo) / 65534.0 : 1.0;
  }
  result.stored.resize(count);
  for (std::size_t i = 0; i < count; ++i) {
    if (!std::isfinite(data[i])) {
      result.stored[i] = kBlank;
      continue;
    }
    const double scaled = std::round((data[i] - result.bzero) / result.bscale);
    result.stored[i] = static_cast<short>(std::clamp(scaled, -32767.0, 32767.0));
  }
  return result;
}

void write_real(fitsfile* file, const char* key, double value, const char* comment, const Writer& writer) {
  int status = 0;
  std::string text = format_real(value);
  char record[FLEN_CARD] = {};
  fits_make_key(key, text.data(), comment, record, &status);
  if (status == 0) fits_write_record(file, record, &status);
  writer.check(status, std::string("writing ") + key);
}

void write_into(fitsfile* file, const cv::Mat& pixels, const Header& header, const FitsWriteOptions& options,
                const std::string& source) {
  Writer writer(file, source);
  int status = 0;
  const bool int16 = options.pixels == FitsWriteOptions::Pixels::ScaledInt16;
  long axes[2] = {pixels.cols, pixels.rows};

  if (options.rice) {
    // Tiled image compression (Pence, Seaman & White 2009): the image lives in a
    // compressed binary-table extension after an empty primary HDU.
    fits_create_img(file, BYTE_IMG, 0, nullptr, &status);
    fits_write_comment(file, "The image is in the tile-compressed extension that follows.", &status);
    fits_write_date(file, &status);
    fits_write_chksum(file, &status);
    writer.check(status, "writing the primary header");
    long tile[2] = {pixels.cols, 1};  // one row per tile
    fits_set_compression_type(file, RICE_1, &status);
    fits_set_tile_dim(file, 2, tile, &status);
    if (!int16) {
      // Floats are quantised before Rice coding (the convention's §4.1): steps of 1/16 of
      // each tile's noise, the convention's subtractive dithering (SUBTRACTIVE_DITHER_1,
      // which every reader knows: astropy 5.2 misreads nulls under SUBTRACTIVE_DITHER_2),
      // and a fixed seed so that the same pixels make the same file.
      fits_set_quantize_level(file, 16.0f, &status);
      fits_set_quantize_method(file, SUBTRACTIVE_DITHER_1, &status);
      fits_set_dither_seed(file, 1, &status);
    }
    writer.check(status, "setting up Rice compression");
  }
  fits_create_img(file, int16 ? SHORT_IMG : FLOAT_IMG, 2, axes, &status);
  writer.check(status, "creating the image");

  Quantised quantised;
  if (int16) {
    quantised = quantise(pixels);
    write_real(file, "BSCALE", quantised.bscale, "physical value = BZERO + BSCALE * stored value", writer);
    write_real(file, "BZERO", quantised.bzero, "physical value of stored value 0", writer);
    fits_write_key_lng(file, "BLANK", kBlank, "stored value of pixels with no data", &status);
    writer.check(status, "writing BLANK");
  }
  for (const HeaderCard& card : header.cards) writer.card(card);
  fits_write_date(file, &status);
  writer.check(status, "writing DATE");

  const LONGLONG count = static_cast<LONGLONG>(pixels.total());
  if (int16) {
    // The values are scaled already: cfitsio must store them as they are.
    fits_set_bscale(file, 1.0, 0.0, &status);
    fits_write_img(file, TSHORT, 1, count, quantised.stored.data(), &status);
  } else if (options.rice) {
    // Quantised tiles hold no NaN or ±Inf: cfitsio must be told which pixels have no
    // data, or a tile holding one is lost whole. They get a marker value absent from the
    // data, passed as the null value, which cfitsio stores as the convention's null.
    float marker = -std::numeric_limits<float>::max();
    cv::Mat marked = pixels.clone();
    while (cv::countNonZero(marked == marker) > 0) marker = std::nextafter(marker, 0.0f);
    for (float& value : cv::Mat_<float>(marked))
      if (!std::isfinite(value)) value = marker;
    fits_write_imgnull(file, TFLOAT, 1, count, marked.ptr<float>(), &marker, &status);
  } else {
    fits_write_img(file, TFLOAT, 1, count, const_cast<float*>(pixels.ptr<float>()), &status);
  }
  writer.check(status, "writing the pixels");
  // CHECKSUM and DATASUM (FITS Standard 4.0 §4.4.2.7) let any reader detect damage.
  fits_write_chksum(file, &status);
  writer.check(status, "writing the checksums");
}

// Checks that `path` can be a file and creates `pending` (its hidden temporary) as an
// empty FITS file.
fitsfile* create_pending(const std::filesystem::path& path, const std::filesystem::path& pending) {
  const std::string source = path.string();
  const std::filesystem::path folder = path.parent_path().empty() ? std::filesystem::path(".") : path.parent_path();
  std::error_code error;
  if (!std::filesystem::is_directory(folder, error))
    throw InputError(source, "it cannot be written: the folder \"" + folder.string() + "\" does not exist");
  if (path.filename().empty() || std::filesystem::is_directory(path, error))
    throw InputError(source, "it cannot be written: the path names a folder, not a file");
  std::filesystem::remove(pending, error);
  fitsfile* raw = nullptr;
  int status = 0;
  // The disk-file entry point takes the name literally (no extended file-name syntax).
  fits_create_diskfile(&raw, pending.c_str(), &status);
  if (status != 0) {
    if (raw) fits_detail::Closer{}(raw);
    throw InputError(source, "it cannot be written: a file cannot be created in \"" + folder.string() + "\" (" +
                                 fits_detail::describe_status(status) + ")");
  }
  return raw;
}

// Closes `file` and renames `pending` into place as `path`.
void close_and_commit(FitsHandle& file, PendingFile& pending, const std::filesystem::path& path) {
  int status = 0;
  fits_close_file(file.release(), &status);
  if (status != 0)
    throw InputError(path.string(), "it cannot be written: finishing the file failed, " +
                                        fits_detail::describe_status(status));
  commit_pending(pending.path(), path);  // fsync, rename, fsync the folder
  pending.done();
}

// Opens a hidden temporary beside `path`, lets `fill` write into it, then renames it into
// place: the target appears whole or not at all.
void write_atomically(const std::filesystem::path& path, const std::function<void(fitsfile*)>& fill) {
  PendingFile pending(pending_path(path));
  FitsHandle file(create_pending(path, pending.path()));  // closed before `pending` removes the file
  fill(file.get());
  close_and_commit(file, pending, path);
}

// Binary table (FITS Standard 4.0 §7.3) of `rows` rows after the current HDU: TFORM D
// for numbers, nA for texts. Nothing when there are no columns.
void write_table(fitsfile* file, const Writer& writer, long rows, const std::string& table_name,
                 const std::vector<FitsTableColumn>& columns) {
  if (columns.empty()) return;
  int status = 0;
  std::vector<std::string> names, forms, units;
  for (const FitsTableColumn& column : columns) {
    names.push_back(column.name);
    units.push_back(column.unit);
    size_t width = 1;
    for (const auto& t : column.texts) width = std::max(width, t.size());
    forms.push_back(column.texts.empty() ? "D" : std::to_string(width) + "A");
  }
  std::vector<char*> ttype, tform, tunit;
  for (size_t i = 0; i < columns.size(); ++i) {
    ttype.push_back(names[i].data());
    tform.push_back(forms[i].data());
    tunit.push_back(units[i].data());
  }
  std::string extname = table_name.empty() ? std::string("TABLE") : table_name;
  fits_create_tbl(file, BINARY_TBL, static_cast<LONGLONG>(rows), static_cast<int>(columns.size()), ttype.data(),
                  tform.data(), tunit.data(), extname.c_str(), &status);
  writer.check(status, "creating the table " + extname);
  for (size_t i = 0; i < columns.size(); ++i) {
    const int column = static_cast<int>(i) + 1;
    if (columns[i].texts.empty()) {
      fits_write_col(file, TDOUBLE, column, 1, 1, static_cast<LONGLONG>(rows),
                     const_cast<double*>(columns[i].numbers.data()), &status);
    } else {
      std::vector<char*> texts;
      std::vector<std::string> copies = columns[i].texts;
      for (auto& t : copies) texts.push_back(t.data());
      fits_write_col(file, TSTRING, column, 1, 1, static_cast<LONGLONG>(rows), texts.data(), &status);
    }
  }
  writer.check(status, "writing the table " + extname);
  fits_write_chksum(file, &status);
  writer.check(status, "writing the table's checksums");
}

}  // namespace

void write_fits(const std::filesystem::path& path, const cv::Mat& pixels, const Header& header,
                const FitsWriteOptions& options) {
  const std::string source = path.string();
  if (pixels.empty() || pixels.dims != 2 || pixels.type() != CV_32FC1)
    throw InputError(source, "it cannot be written: the pixels given are not a non-empty single-channel float32 image");
  const cv::Mat data = pixels.isContinuous() ? pixels : pixels.clone();
  write_atomically(path, [&](fitsfile* file) { write_into(file, data, header, options, source); });
}

void write_fits_cube(const std::filesystem::path& path, const std::vector<cv::Mat>& planes, const Header& header,
                     const std::string& table_name, const std::vector<FitsTableColumn>& columns) {
  if (planes.empty()) throw InputError(path.string(), "it cannot be written: the cube has no planes");
  FitsCubeWriter cube(path, planes.front().size(), static_cast<long>(planes.size()), header);
  for (const cv::Mat& plane : planes) cube.add(plane);
  cube.finish(table_name, columns);
}

struct FitsCubeWriter::State {
  std::filesystem::path path;
  std::string source;
  cv::Size size;
  long max_planes = 0, added = 0;
  // The data unit's checksum, summed as the planes come (add), so that finish() need not
  // read the whole cube back from the file to compute DATASUM (fits_write_chksum did).
  std::uint64_t data_sum = 0;
  PendingFile pending;  // declared before `file`: the file is closed before the temporary is removed
  FitsHandle file;
  Writer writer;
  // The temporary opened a second time, read-only, only to start the kernel writing its
  // pages to the disk as the planes come (writeback, below); -1 when it could not be.
  int writeback_fd = -1;
  // Set by freeze_planes(): where the data unit starts in the file (-1: not frozen).
  LONGLONG frozen_data_start = -1;

  State(const std::filesystem::path& target, cv::Size plane_size, long max)
      : path(target), source(target.string()), size(plane_size), max_planes(max), pending(pending_path(target)),
        file(create_pending(target, pending.path())), writer(file.get(), source),
        writeback_fd(::open(pending.path().c_str(), O_RDONLY | O_CLOEXEC)) {}
  ~State() {
    if (writeback_fd >= 0) ::close(writeback_fd);
  }
  State(const State&) = delete;
  State& operator=(const State&) = delete;
  LONGLONG per_plane() const { return static_cast<LONGLONG>(size.area()); }

  // The file is made whole on the disk when it is finished (fsync in commit_pending),
  // which waits for every page not yet written: for a cube of 30 1024² planes' polar
  // differences, 35 MB written in the run's last tens of milliseconds, while everything
  // else waits for it. So each plane, once added, starts the kernel writing what is
  // dirty so far (sync_file_range(2) SYNC_FILE_RANGE_WRITE: starts writeback and does
  // not wait for it; any descriptor of the file will do, the pages are the file's), and
  // the final fsync finds most of the file on the disk already. Advice only: the bytes
  // written are the same, and the fsync still makes the file durable.
  void writeback() const {
    if (writeback_fd >= 0) ::sync_file_range(writeback_fd, 0, 0, SYNC_FILE_RANGE_WRITE);
  }
};

FitsCubeWriter::FitsCubeWriter(const std::filesystem::path& path, cv::Size plane_size, long max_planes,
                               const Header& header) {
  if (plane_size.empty() || max_planes < 1)
    throw InputError(path.string(), "it cannot be written: the cube has no planes");
  state_ = std::make_unique<State>(path, plane_size, max_planes);
  int status = 0;
  long axes[3] = {plane_size.width, plane_size.height, max_planes};
  fits_create_img(state_->file.get(), FLOAT_IMG, 3, axes, &status);
  state_->writer.check(status, "creating the cube");
  for (const HeaderCard& card : header.cards) state_->writer.card(card);
  fits_write_date(state_->file.get(), &status);
  state_->writer.check(status, "writing DATE");
}

FitsCubeWriter::~FitsCubeWriter() = default;

long FitsCubeWriter::planes() const { return state_->added; }

void FitsCubeWriter::add(const cv::Mat& plane) {
  State& s = *state_;
  if (!s.file) throw InputError(s.source, "it cannot be written: a plane came after the cube was finished");
  if (s.frozen_data_start >= 0) throw InputError(s.source, "it cannot be written: a plane came after its planes were frozen");
  if (plane.type() != CV_32FC1 || plane.size() != s.size)
    throw InputError(s.source, "it cannot be written: the cube's planes are not equal-size float32 images");
  if (s.added >= s.max_planes)
    throw InputError(s.source, "it cannot be written: more planes came than the " + std::to_string(s.max_planes) +
                                   " the cube was made for");
  const cv::Mat data = plane.isContinuous() ? plane : plane.clone();
  int status = 0;
  // FITS pixels are numbered from 1; plane k starts after k whole planes.
  fits_write_img(s.file.get(), TFLOAT, 1 + s.added * s.per_plane(), s.per_plane(), const_cast<float*>(data.ptr<float>()),
                 &status);
  s.writer.check(status, "writing the cube's pixels");
  // DATASUM is the 32-bit ones'-complement sum of the data unit read as big-endian 32-bit
  // words (FITS Standard 4.0 Appendix J); a float32 pixel stored big-endian is one such
  // word whose value is the float's bit pattern (IEEE 754 binary32, as fits_write_img
  // stores it, NaN included), and the zero padding to 2880 bytes adds nothing. Carries
  // are folded back in (end-around carry) once per plane: a plane's 2³⁰ words at most
  // cannot overflow 64 bits.
  std::uint64_t sum = s.data_sum;
  for (int y = 0; y < data.rows; ++y) {
    const float* pixel = data.ptr<float>(y);
    for (int x = 0; x < data.cols; ++x) sum += std::bit_cast<std::uint32_t>(pixel[x]);
  }
  while (sum >> 32) sum = (sum & 0xffffffffu) + (sum >> 32);
  s.data_sum = sum;
  ++s.added;
  s.writeback();
}

namespace {

// `bytes` from `fd` at `at` (pread(2), short reads continued); false when they cannot all
// be read.
bool read_at(int fd, void* out, std::size_t bytes, off_t at) {
  std::size_t got = 0;
  while (got < bytes) {
    const ssize_t n = ::pread(fd, static_cast<char*>(out) + got, bytes - got, at + static_cast<off_t>(got));
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) return false;
    got += static_cast<std::size_t>(n);
  }
  return true;
}

// Big-endian floats (FITS Standard 4.0 §5.3) to the machine's order, in place.
void from_big_endian(cv::Mat& floats) {
  if constexpr (std::endian::native == std::endian::little) {
    auto* words = reinterpret_cast<std::uint32_t*>(floats.data);
    for (std::size_t i = 0, n = floats.total(); i < n; ++i) words[i] = __builtin_bswap32(words[i]);
  }
}

}  // namespace

bool FitsCubeWriter::freeze_planes() {
  State& s = *state_;
  if (!s.file) throw InputError(s.source, "its planes cannot be read: the cube was finished already");
  if (s.writeback_fd < 0) return false;
  int status = 0;
  LONGLONG header_start = 0, data_start = 0, data_end = 0;
  fits_flush_buffer(s.file.get(), 0, &status);
  fits_get_hduaddrll(s.file.get(), &header_start, &data_start, &data_end, &status);
  s.writer.check(status, "flushing its planes to the file");
  s.frozen_data_start = data_start;
  return true;
}

cv::Mat FitsCubeWriter::plane(long k) const {
  const State& s = *state_;
  if ((s.frozen_data_start < 0 && !s.file) || k < 0 || k >= s.added)  // frozen: s.file not read (finish may be resetting it)
    throw InputError(s.source, "plane " + std::to_string(k) + " is not in the cube being written");
  cv::Mat out(s.size, CV_32FC1);
  if (s.frozen_data_start >= 0) {
    // freeze_planes(): the planes' bytes do not move again (finish() only rewrites
    // header cards and appends the table), and cfitsio is not touched here.
    const std::size_t bytes = out.total() * sizeof(float);
    if (!read_at(s.writeback_fd, out.data, bytes, static_cast<off_t>(s.frozen_data_start) + static_cast<off_t>(k) * static_cast<off_t>(bytes)))
      throw InputError(s.source, "plane " + std::to_string(k) + " cannot be read back from the file");
    from_big_endian(out);
    return out;
  }
  int status = 0;
  // Read straight from the file (pread(2) on the read-only descriptor, after cfitsio's
  // buffers are flushed to it) and turned from big-endian (FITS Standard 4.0 §5.3) to the
  // machine's order: the values as stored, NaN included, as fits_read_img gives them with
  // no null check, without cfitsio's 2880-byte buffers in between. The time–height maps
  // of `maps` read every plane back at the end, on the run's critical path.
  LONGLONG header_start = 0, data_start = 0, data_end = 0;
  fits_flush_buffer(s.file.get(), 0, &status);
  fits_get_hduaddrll(s.file.get(), &header_start, &data_start, &data_end, &status);
  if (status == 0 && s.writeback_fd >= 0) {
    const std::size_t bytes = out.total() * sizeof(float);
    if (read_at(s.writeback_fd, out.data, bytes, static_cast<off_t>(data_start) + static_cast<off_t>(k) * static_cast<off_t>(bytes))) {
      from_big_endian(out);
      return out;
    }
  }
  status = 0;  // not read so: through cfitsio, which says why when it cannot either
  float no_null_check = 0.0f;  // 0: values come back as stored, NaN included (cfitsio's convention)
  int any_null = 0;
  fits_read_img(s.file.get(), TFLOAT, 1 + k * s.per_plane(), s.per_plane(), &no_null_check, out.ptr<float>(),
                &any_null, &status);
  s.writer.check(status, "reading a plane back");
  return out;
}

void FitsCubeWriter::finish(const std::string& table_name, const std::vector<FitsTableColumn>& columns) {
  State& s = *state_;
  if (!s.file) throw InputError(s.source, "it cannot be written: the cube was finished already");
  if (s.added == 0) throw InputError(s.source, "it cannot be written: the cube has no planes");
  for (const FitsTableColumn& column : columns)
    if (std::max(column.numbers.size(), column.texts.size()) != static_cast<size_t>(s.added) ||
        (!column.numbers.empty() && !column.texts.empty()))
      throw InputError(s.source, "it cannot be written: table column " + column.name + " needs one value per plane");
  int status = 0;
  if (s.added < s.max_planes) {
    long axes[3] = {s.size.width, s.size.height, s.added};
    fits_resize_img(s.file.get(), FLOAT_IMG, 3, axes, &status);
    s.writer.check(status, "setting the cube's plane count");
  }
  // What fits_write_chksum writes (the same cards, values and comments, in its order),
  // with DATASUM from the sum kept while adding; fits_update_chksum then computes only
  // the header's CHECKSUM (cfitsio: it trusts DATASUM). Tested byte for byte against
  // fits_write_chksum's file (fits_cube_test).
  char date[FLEN_VALUE] = "";
  int time_reference = 0;
  fits_get_system_time(date, &time_reference, &status);
  const std::string hdu_comment = std::string("HDU checksum updated ") + date;
  const std::string data_comment = std::string("data unit checksum updated ") + date;
  const std::string data_sum = std::to_string(s.data_sum);
  fits_write_key_str(s.file.get(), "CHECKSUM", "0000000000000000", hdu_comment.c_str(), &status);
  fits_write_key_str(s.file.get(), "DATASUM", data_sum.c_str(), data_comment.c_str(), &status);
  fits_update_chksum(s.file.get(), &status);
  s.writer.check(status, "writing the checksums");
  write_table(s.file.get(), s.writer, s.added, table_name, columns);
  close_and_commit(s.file, s.pending, s.path);
}

}  // namespace occulta::imaging
