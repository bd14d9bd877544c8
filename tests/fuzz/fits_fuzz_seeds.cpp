// tests/fuzz/fits_fuzz_seeds.cpp — writes the fits_fuzz seed corpus into the folder
// given (emptied first): small frames of our own in every form the reader knows —
// float32, scaled int16 with BLANK, Rice-compressed both ways — with the WCS, observer
// and time keywords read_geometry and read_frame_time look for, so that mutations start
// from inputs that reach every stage.
#include <cmath>
#include <filesystem>
#include <iostream>

#include "imaging/fits.hpp"

int main(int argc, char** argv) {
  using namespace occulta::imaging;
  if (argc != 2) {
    std::cerr << "usage: fits_fuzz_seeds FOLDER\n";
    return 2;
  }
  const std::filesystem::path folder = argv[1];
  std::filesystem::remove_all(folder);
  std::filesystem::create_directories(folder);

  cv::Mat pixels(12, 16, CV_32FC1);
  for (int y = 0; y < pixels.rows; ++y)
    for (int x = 0; x < pixels.cols; ++x) pixels.at<float>(y, x) = static_cast<float>(100.0 + 7.0 * std::sin(x + 2.0 * y));
  pixels.at<float>(3, 5) = NAN;

  // Invented values of a plausible frame (not a real observation).
  Header header;
  header.set_text("DATE-OBS", "2031-03-04T07:00:00.000");
  header.set_real("EXPTIME", 12.5);
  header.set_text("CTYPE1", "HPLN-TAN");
  header.set_text("CTYPE2", "HPLT-TAN");
  header.set_text("CUNIT1", "arcsec");
  header.set_text("CUNIT2", "arcsec");
  header.set_real("CRPIX1", 8.5);
  header.set_real("CRPIX2", 6.5);
  header.set_real("CRVAL1", 0.0);
  header.set_real("CRVAL2", 0.0);
  header.set_real("CDELT1", 60.0);
  header.set_real("CDELT2", 60.0);
  header.set_real("CROTA2", 3.0);
  header.set_real("HGLN_OBS", 10.0);
  header.set_real("HGLT_OBS", 1.0);
  header.set_real("DSUN_OBS", 1.49e11);

  int count = 0;
  for (const bool rice : {false, true})
    for (const auto kind : {FitsWriteOptions::Pixels::Float32, FitsWriteOptions::Pixels::ScaledInt16}) {
      const auto path = folder / ("seed" + std::to_string(count++) + ".fits");
      write_fits(path, pixels, header, FitsWriteOptions{kind, rice});
    }
  std::cout << "fits_fuzz_seeds: wrote " << count << " seeds into " << folder << "\n";
  return 0;
}
