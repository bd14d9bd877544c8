// tests/imaging/sequence_test.cpp — imaging/sequence and the chain's handling of bad
// input: two observers refused, unreadable frames skipped and reported, frames sorted,
// duplicate times reduced to one, fewer than three frames refused, a size change resampled.
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <limits>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "imaging/chain.hpp"
#include "imaging/input_error.hpp"
#include "imaging/sequence.hpp"
#include "tests/imaging/frame_maker.hpp"
#include "tests/support/support.hpp"

namespace fs = std::filesystem;
namespace oi = occulta::imaging;
using occulta::test::frame_header;
using occulta::test::frame_spec;
using occulta::test::gaussian;
using occulta::test::paint;

namespace {

constexpr double kT0 = 9.7e8;  // an invented time in 2030

// A 192² frame: corona-like falloff, Gaussian noise (σ 0.5) and a blob at (west, north) = (−3, 2) R☉ whose
// brightness grows with `k`, so successive frames differ.
fs::path make_frame(const fs::path& dir, const std::string& name, double utc_s, int k,
                    oi::GeometrySpec spec = frame_spec(192, 95.3, 96.1, 240.0, 5.0)) {
  cv::RNG rng(1000 + k);
  const cv::Mat pixels = paint(spec, [&](double w, double n) {
    const double h = std::hypot(w, n);
    if (h < 2.5) return std::numeric_limits<double>::quiet_NaN();
    return 1e3 / (h * h * h) + 30.0 * (1.0 + k) * gaussian(w + 3.0, n - 2.0, 0.8) + rng.gaussian(0.5);
  });
  const fs::path path = dir / name;
  occulta::test::write_frame(path, pixels, frame_header(spec, utc_s, 20.0));
  return path;
}

// Bytes up to the end of the primary header: the 2880-byte block holding the END card
// (FITS Standard 4.0 §3.3.1, §4.4.1).
std::uintmax_t header_bytes(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::string card(80, ' ');
  for (std::uintmax_t n = 0; in.read(card.data(), 80); n += 80)
    if (card.compare(0, 8, "END     ") == 0) return (n / 2880 + 1) * 2880;
  FAIL("no END card in " << path);
  return 0;
}

bool mentions(const std::vector<std::string>& problems, const std::string& text) {
  return std::any_of(problems.begin(), problems.end(), [&](const std::string& p) { return p.find(text) != p.npos; });
}

}  // namespace

TEST_CASE("sequence: frames out of order are sorted and duplicate times keep one, reported") {
  const auto dir = occulta::test::scratch_dir("sequence-order");
  const std::vector<fs::path> paths = {make_frame(dir, "c.fits", kT0 + 1200, 2), make_frame(dir, "a.fits", kT0, 0),
                                       make_frame(dir, "b.fits", kT0 + 600, 1),
                                       make_frame(dir, "b-again.fits", kT0 + 600, 1)};
  const auto sequence = oi::scan_view("east", paths);
  REQUIRE(sequence.frames.size() == 3);
  CHECK(sequence.frames[0].path.filename() == "a.fits");
  CHECK(sequence.frames[1].path.filename() == "b.fits");  // the first given of the two
  CHECK(sequence.frames[2].path.filename() == "c.fits");
  REQUIRE(sequence.problems.size() == 1);
  CHECK(mentions(sequence.problems, "b-again.fits: it has the same time"));
  CHECK(sequence.frames[0].exposure_s == doctest::Approx(20.0));
}

TEST_CASE("sequence: an unreadable frame is skipped and reported, the rest go on") {
  const auto dir = occulta::test::scratch_dir("sequence-unreadable");
  std::vector<fs::path> paths;
  for (int k = 0; k < 4; ++k) paths.push_back(make_frame(dir, "f" + std::to_string(k) + ".fits", kT0 + 600 * k, k));
  std::ofstream(dir / "junk.fits") << "this is not a FITS file";
  paths.push_back(dir / "junk.fits");
  // A frame whose pixels are cut short (imaging/fits finds it from the header's size).
  const fs::path cut = make_frame(dir, "cut.fits", kT0 + 3000, 5);
  fs::resize_file(cut, header_bytes(cut) + 100);
  paths.push_back(cut);

  const auto sequence = oi::scan_view("east", paths);
  CHECK(sequence.frames.size() == 4);
  CHECK(mentions(sequence.problems, "junk.fits: it is not a FITS file"));
  CHECK(mentions(sequence.problems, "cut.fits: the file is truncated"));

  const auto run = oi::polar_running_differences("east", paths);
  CHECK(run.run.frames_used == 4);
  CHECK(run.running.frames.size() == 3);
  CHECK(mentions(run.run.problems, "junk.fits"));
  CHECK(mentions(run.run.problems, "cut.fits"));
  CHECK(mentions(run.run.notes, "from the data"));
}

TEST_CASE("sequence: frames of two observers in one view are refused") {
  const auto dir = occulta::test::scratch_dir("sequence-observers");
  const auto other = occulta::test::frame_spec(192, 95.3, 96.1, 240.0, 5.0,
                                               oi::observer_from_degrees(60.0, 1.0, 0.97 * occulta::kAuKm));
  const std::vector<fs::path> paths = {make_frame(dir, "a.fits", kT0, 0), make_frame(dir, "b.fits", kT0 + 600, 1),
                                       make_frame(dir, "far.fits", kT0 + 1200, 2, other)};
  CHECK_THROWS_WITH_AS(oi::scan_view("east", paths), doctest::Contains("view east: it holds frames of two observers"),
                       oi::InputError);
  CHECK_THROWS_WITH_AS(oi::scan_view("east", paths), doctest::Contains("far.fits"), oi::InputError);
}

TEST_CASE("sequence: fewer than three usable frames are a clear problem") {
  const auto dir = occulta::test::scratch_dir("sequence-few");
  std::ofstream(dir / "junk.fits") << "garbage";
  const std::vector<fs::path> paths = {make_frame(dir, "a.fits", kT0, 0), make_frame(dir, "b.fits", kT0 + 600, 1),
                                       dir / "junk.fits"};
  CHECK_THROWS_WITH_AS(oi::scan_view("east", paths),
                       doctest::Contains("view east: it has 2 usable frames of 3; running differences need at least three"),
                       oi::InputError);
  CHECK_THROWS_AS(oi::polar_running_differences("east", paths), oi::InputError);
}

TEST_CASE("sequence: a size change mid-sequence is resampled onto the common grid") {
  const auto dir = occulta::test::scratch_dir("sequence-size");
  const auto binned = frame_spec(96, 47.6, 48.2, 480.0, -3.0);  // 2×2 binned, repointed, rolled
  const std::vector<fs::path> paths = {make_frame(dir, "a.fits", kT0, 0), make_frame(dir, "b.fits", kT0 + 600, 1),
                                       make_frame(dir, "c.fits", kT0 + 1200, 2, binned),
                                       make_frame(dir, "d.fits", kT0 + 1800, 3)};
  std::vector<cv::Point> peaks;
  oi::ChainOptions options;
  options.cartesian = oi::ChainOptions::Cartesian::Every;  // the registered frames too, to check their size
  const auto run = oi::run_view("east", paths, options, [&](const oi::ChainFrame& f) {
    CHECK(f.registered.size() == cv::Size(192, 192));
    // The growing blob is the strongest positive change of every running difference.
    cv::Mat finite = f.polar_running.clone();
    cv::patchNaNs(finite, -1e9);
    cv::Point at;
    cv::minMaxLoc(finite, nullptr, nullptr, nullptr, &at);
    peaks.push_back(at);
  });
  CHECK(run.registration_builds == 3);  // first geometry, the binned frame, back again
  REQUIRE(peaks.size() == 3);
  // Blob at (west, north) = (−3, 2): PA = atan2(3, 2) = 56.3°, height √13 = 3.61 R☉. The
  // peak of a noise-normalised difference on a 0.25 R☉ grid sits within about a pixel of
  // it (a pixel is 4° of PA there); a frame resampled at the wrong scale would put it at
  // twice or half the height.
  for (const auto& p : peaks) {
    CAPTURE(p);
    CHECK(std::abs(run.polar.pa_deg(p.x) - 56.3) <= 5.0);
    CHECK(std::abs(run.polar.height_rs(p.y) - std::sqrt(13.0)) <= 2 * run.polar.height_step_rs);
  }
}
