// A cube of planes with a table of per-plane values: what `maps` writes as polar.fits.
#include <cmath>
#include <cstring>
#include <filesystem>
#include <future>
#include <iterator>
#include <string>

#include <doctest/doctest.h>
#include <fitsio.h>
#include <nlohmann/json.hpp>

#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"
#include "tests/support/support.hpp"

TEST_CASE("fits: a cube with a table reads back in astropy and passes fitsverify") {
  using occulta::test::shell_quote;
  const auto dir = occulta::test::scratch_dir("fits_cube");
  std::vector<cv::Mat> planes;
  for (int k = 0; k < 3; ++k) {
    cv::Mat plane(4, 5, CV_32FC1);
    for (int y = 0; y < 4; ++y)
      for (int x = 0; x < 5; ++x) plane.at<float>(y, x) = float(100 * k + 10 * y + x);
    planes.push_back(plane);
  }
  planes[1].at<float>(2, 3) = NAN;
  occulta::imaging::Header header;
  header.set_text("CTYPE3", "FRAME", "plane index");
  const occulta::imaging::FitsTableColumn utc{"UTC_S", "s", {1.0e9, 1.0e9 + 600.5, 1.0e9 + 1300.25}, {}};
  const occulta::imaging::FitsTableColumn iso{"TIME", "", {}, {"2031-01-01T00:00:00", "b", "c"}};
  const auto path = dir / "cube.fits";
  occulta::imaging::write_fits_cube(path, planes, header, "FRAMES", {utc, iso});

  // fitsverify (HEASARC, Debian package): 0 errors, 0 warnings.
  const auto verify = occulta::test::run_command(shell_quote(OCCULTA_FITSVERIFY) + " -q " + shell_quote(path.string()));
  CHECK_MESSAGE(verify.output.find("verification OK") != std::string::npos, verify.output);

  // astropy.io.fits: numpy order (plane, row, column), FITS order of pixels.
  const auto read = occulta::test::run_python("tests/external/read_cube.py", shell_quote(path.string()));
  REQUIRE_MESSAGE(read.exit_code == 0, read.output);
  const auto j = nlohmann::json::parse(read.output);
  CHECK(j["shape"] == nlohmann::json({3, 4, 5}));
  CHECK(j["ctype3"] == "FRAME");
  for (int k = 0; k < 3; ++k)
    for (int y = 0; y < 4; ++y)
      for (int x = 0; x < 5; ++x) {
        const auto& v = j["pixels"][(k * 4 + y) * 5 + x];
        if (k == 1 && y == 2 && x == 3) CHECK(v.is_null());
        else CHECK(v.get<double>() == planes[k].at<float>(y, x));
      }
  CHECK(j["extname"] == "FRAMES");
  CHECK(j["columns"]["UTC_S"][1].get<double>() == 1.0e9 + 600.5);
  CHECK(j["columns"]["TIME"][0] == "2031-01-01T00:00:00");

  // Bad input: planes of different sizes are refused with a sentence naming the file.
  planes.push_back(cv::Mat(2, 2, CV_32FC1, cv::Scalar(0)));
  try {
    occulta::imaging::write_fits_cube(dir / "bad.fits", planes, header);
    FAIL("accepted planes of different sizes");
  } catch (const occulta::imaging::InputError& e) {
    CHECK(std::string(e.what()).find("bad.fits") != std::string::npos);
  }
  CHECK(!std::filesystem::exists(dir / "bad.fits"));
}

namespace {

// The file's bytes with what differs between two writes of the same cube blanked: the
// DATE and CHECKSUM cards (a clock time, and a checksum over a header holding it) and the
// comment of DATASUM, which cfitsio dates (its value, over the data only, is kept). Cards
// are 80 bytes from the start of each 2880-byte header block (FITS Standard 4.0 §3.3.1,
// §4.4.2.7).
std::string without_dates(std::string bytes) {
  for (std::size_t at = 0; at + 80 <= bytes.size(); at += 80)
    if (bytes.compare(at, 8, "DATE    ") == 0 || bytes.compare(at, 8, "CHECKSUM") == 0) {
      bytes.replace(at + 8, 72, 72, ' ');
    } else if (bytes.compare(at, 8, "DATASUM ") == 0) {
      const std::size_t slash = bytes.find('/', at + 10);
      if (slash < at + 80) bytes.replace(slash, at + 80 - slash, at + 80 - slash, ' ');
    }
  return bytes;
}

// `count` float32 planes of `size`: uniform noise in [k − 5, k + 5) for plane k, and one
// NaN at row 7, column 11 of each (size at least 8 × 12).
std::vector<cv::Mat> noisy_planes(int count, cv::Size size) {
  std::vector<cv::Mat> planes;
  for (int k = 0; k < count; ++k) {
    cv::Mat plane(size, CV_32FC1);
    cv::randu(plane, -5.0f + k, 5.0f + k);
    plane.at<float>(7, 11) = NAN;
    planes.push_back(plane);
  }
  return planes;
}

}  // namespace

TEST_CASE("fits: a cube written plane by plane with room to spare equals the cube written whole") {
  using occulta::imaging::FitsCubeWriter;
  using occulta::imaging::FitsTableColumn;
  const auto dir = occulta::test::scratch_dir("fits_cube_stream");
  // 150 × 40 float32 = 24 kB a plane: several 2880-byte blocks, so that the unused room
  // (two planes) spans whole blocks that must be dropped.
  const std::vector<cv::Mat> planes = noisy_planes(3, cv::Size(150, 40));
  occulta::imaging::Header header;
  header.set_text("CTYPE3", "FRAME", "plane index");
  const FitsTableColumn utc{"UTC_S", "s", {1.0e9, 1.0e9 + 600.5, 1.0e9 + 1300.25}, {}};
  occulta::imaging::write_fits_cube(dir / "whole.fits", planes, header, "FRAMES", {utc});
  {
    FitsCubeWriter cube(dir / "streamed.fits", planes.front().size(), 5, header);
    for (const cv::Mat& plane : planes) cube.add(plane);
    CHECK(cube.planes() == 3);
    // Read back as written, NaN included.
    const cv::Mat back = cube.plane(1);
    REQUIRE(back.size() == planes[1].size());
    CHECK(std::memcmp(back.data, planes[1].data, planes[1].total() * sizeof(float)) == 0);  // bit for bit
    CHECK(std::isnan(back.at<float>(7, 11)));
    // Every plane, in any order (read back past cfitsio's buffers: FitsCubeWriter::plane).
    for (const long k : {2L, 0L}) {
      const cv::Mat again = cube.plane(k);
      CHECK(std::memcmp(again.data, planes[std::size_t(k)].data, planes[std::size_t(k)].total() * sizeof(float)) == 0);
    }
    CHECK(!std::filesystem::exists(dir / "streamed.fits"));  // nothing in place before finish()
    cube.finish("FRAMES", {utc});
  }
  const std::string whole = occulta::test::slurp(dir / "whole.fits");
  const std::string streamed = occulta::test::slurp(dir / "streamed.fits");
  CHECK(whole.size() == streamed.size());
  CHECK(whole.size() % 2880 == 0);
  CHECK(without_dates(whole) == without_dates(streamed));

  // fitsverify (HEASARC, Debian package) checks the resized file's CHECKSUM and DATASUM.
  using occulta::test::shell_quote;
  const auto verify = occulta::test::run_command(shell_quote(OCCULTA_FITSVERIFY) + " -q " +
                                                 shell_quote((dir / "streamed.fits").string()));
  CHECK_MESSAGE(verify.output.find("verification OK") != std::string::npos, verify.output);

  // A writer dropped before finish() leaves nothing behind, not even its temporary.
  {
    FitsCubeWriter cube(dir / "dropped.fits", planes.front().size(), 5, header);
    cube.add(planes[0]);
  }
  CHECK(std::distance(std::filesystem::directory_iterator(dir), std::filesystem::directory_iterator()) == 2);

  // More planes than announced, or a plane of another size: refused, naming the file.
  FitsCubeWriter cube(dir / "small.fits", planes.front().size(), 1, header);
  cube.add(planes[0]);
  CHECK_THROWS_WITH_AS(cube.add(planes[1]), doctest::Contains("small.fits"), occulta::imaging::InputError);
  CHECK_THROWS_WITH_AS(cube.add(cv::Mat(2, 2, CV_32FC1, cv::Scalar(0))), doctest::Contains("small.fits"),
                       occulta::imaging::InputError);
}

TEST_CASE("fits: a cube's DATASUM summed plane by plane equals cfitsio's, cards and all") {
  // FitsCubeWriter sums the data unit as planes come instead of reading the cube back; the
  // file must be what cfitsio's fits_write_chksum makes (FITS Standard 4.0 Appendix J):
  // a copy has its CHECKSUM and DATASUM removed and rewritten by cfitsio from the data,
  // and the two files must be the same bytes (the dates in the cards aside).
  using occulta::imaging::FitsCubeWriter;
  const auto dir = occulta::test::scratch_dir("fits_cube_datasum");
  occulta::imaging::Header header;
  header.set_text("CTYPE3", "FRAME", "plane index");
  {
    // Planes of 3 × 7 × 4 bytes (not whole blocks), values of every sign and magnitude,
    // NaN and infinities: carries in the sum and padding after the data.
    FitsCubeWriter cube(dir / "summed.fits", cv::Size(7, 3), 4, header);
    cv::RNG rng(7);
    for (int k = 0; k < 3; ++k) {
      cv::Mat plane(3, 7, CV_32FC1);
      for (int y = 0; y < 3; ++y)
        for (int x = 0; x < 7; ++x) plane.at<float>(y, x) = float(rng.gaussian(1.0) * std::pow(10.0, 3 * k - 3));
      plane.at<float>(1, k) = NAN;
      plane.at<float>(2, k) = k % 2 ? -INFINITY : INFINITY;
      plane.at<float>(0, 6) = -0.0f;
      cube.add(plane);
    }
    cube.finish();
  }
  std::filesystem::copy_file(dir / "summed.fits", dir / "by_cfitsio.fits",
                             std::filesystem::copy_options::overwrite_existing);
  fitsfile* file = nullptr;
  int status = 0;
  fits_open_file(&file, (dir / "by_cfitsio.fits").c_str(), READWRITE, &status);
  fits_delete_key(file, "CHECKSUM", &status);
  fits_delete_key(file, "DATASUM", &status);
  fits_write_chksum(file, &status);
  fits_close_file(file, &status);
  REQUIRE(status == 0);
  const std::string ours = occulta::test::slurp(dir / "summed.fits");
  const std::string theirs = occulta::test::slurp(dir / "by_cfitsio.fits");
  CHECK(ours.size() == theirs.size());
  CHECK(without_dates(ours) == without_dates(theirs));
  CHECK(ours.find("DATASUM") != std::string::npos);
}

TEST_CASE("fits: a cube's frozen planes read back while it is finished on another thread, and after") {
  // maps reads the planes for its time–height maps while the cube is finished beside it
  // (app/maps.cpp). The planes must come back bit for bit during and after finish(), the
  // file must be the one written without freezing, and no plane may come after.
  using occulta::imaging::FitsCubeWriter;
  const auto dir = occulta::test::scratch_dir("fits_cube_frozen");
  const std::vector<cv::Mat> planes = noisy_planes(4, cv::Size(200, 64));
  occulta::imaging::Header header;
  header.set_text("CTYPE3", "FRAME", "plane index");
  const occulta::imaging::FitsTableColumn utc{"UTC_S", "s", {1.0e9, 1.0e9 + 60.0, 1.0e9 + 120.0, 1.0e9 + 180.0}, {}};
  occulta::imaging::write_fits_cube(dir / "whole.fits", planes, header, "FRAMES", {utc});
  FitsCubeWriter cube(dir / "frozen.fits", planes.front().size(), 6, header);
  for (const cv::Mat& plane : planes) cube.add(plane);
  REQUIRE(cube.freeze_planes());
  CHECK_THROWS_WITH_AS(cube.add(planes[0]), doctest::Contains("frozen.fits"), occulta::imaging::InputError);
  std::future<void> finishing = std::async(std::launch::async, [&] { cube.finish("FRAMES", {utc}); });
  int same = 0;
  for (int round = 0; round < 50; ++round)  // during finish() (and, as it ends, after)
    for (long k = 0; k < 4; ++k) {
      const cv::Mat back = cube.plane(k);
      same += std::memcmp(back.data, planes[std::size_t(k)].data, planes[std::size_t(k)].total() * sizeof(float)) == 0;
    }
  finishing.get();
  CHECK(same == 200);
  const cv::Mat after = cube.plane(3);
  CHECK(std::memcmp(after.data, planes[3].data, planes[3].total() * sizeof(float)) == 0);
  CHECK_THROWS_WITH_AS(cube.plane(4), doctest::Contains("frozen.fits"), occulta::imaging::InputError);
  CHECK(without_dates(occulta::test::slurp(dir / "whole.fits")) == without_dates(occulta::test::slurp(dir / "frozen.fits")));
}
