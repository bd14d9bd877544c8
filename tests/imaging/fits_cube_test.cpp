// A cube of planes with a table of per-plane values: what `maps` writes as polar.fits.
#include <doctest/doctest.h>
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
