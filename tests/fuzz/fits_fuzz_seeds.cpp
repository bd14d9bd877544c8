// tests/fuzz/fits_fuzz_seeds.cpp — writes the fits_fuzz seed corpus into the folder
// given (emptied first): small frames of our own in every form the reader knows —
// float32, scaled int16 with BLANK, Rice-compressed both ways — with the WCS, observer
// and time keywords read_geometry and read_frame_time look for, so that mutations start
// from inputs that reach every stage.
//
// The seeds are the same bytes on every run: the suite's seeded fuzz steps must find the
// same inputs every time (tests/fuzz/run_fuzz.cmake), and a seed that held the time it
// was written (DATE, and the comment cfitsio gives CHECKSUM) made every run of the suite
// mutate different bytes. Those times are set to one fixed instant, and CHECKSUM is made
// again to match (FITS Standard 4.0 §4.4.2.7); each seed is then read back through the
// reader the targets fuzz, which verifies it.
#include <cmath>
#include <filesystem>
#include <iostream>

#include <fitsio.h>

#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"

namespace {

constexpr char kFixedTime[] = "2031-03-04T07:00:00";  // invented, like the frames' own times

// Every HDU of `path`: DATE set to kFixedTime, the clock times cfitsio writes in the
// comments of CHECKSUM and DATASUM taken out, and CHECKSUM made again. CHECKSUM is first zeroed, then set to the complement of the HDU's
// ones'-complement sum (cfitsio's fits_get_chksum and fits_encode_chksum: the checksum
// convention, FITS Standard 4.0 Appendix J). DATASUM is left as written: the data do not change.
bool fix_times(const std::filesystem::path& path) {
  fitsfile* file = nullptr;
  int status = 0, hdus = 0;
  fits_open_diskfile(&file, path.c_str(), READWRITE, &status);
  fits_get_num_hdus(file, &hdus, &status);
  for (int hdu = 1; hdu <= hdus && status == 0; ++hdu) {
    fits_movabs_hdu(file, hdu, nullptr, &status);
    char value[FLEN_VALUE] = "", comment[FLEN_COMMENT] = "";
    int absent = 0;
    fits_read_keyword(file, "DATE", value, comment, &absent);
    if (absent == 0) fits_modify_key_str(file, "DATE", kFixedTime, "&", &status);
    absent = 0;
    fits_read_keyword(file, "CHECKSUM", value, comment, &absent);
    if (absent != 0) continue;
    fits_modify_comment(file, "DATASUM", "data unit checksum", &status);
    fits_modify_key_str(file, "CHECKSUM", "0000000000000000", "HDU checksum", &status);
    unsigned long datasum = 0, hdusum = 0;
    fits_get_chksum(file, &datasum, &hdusum, &status);
    char checksum[17] = "";
    fits_encode_chksum(hdusum, 1, checksum);
    fits_modify_key_str(file, "CHECKSUM", checksum, "&", &status);
  }
  if (file) fits_close_file(file, &status);
  return status == 0;
}

}  // namespace

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
      if (!fix_times(path)) {
        std::cerr << "fits_fuzz_seeds: " << path << ": its times could not be fixed\n";
        return 1;
      }
      try {
        read_fits(path);
      } catch (const InputError& error) {
        std::cerr << "fits_fuzz_seeds: a seed does not read back: " << error.what() << "\n";
        return 1;
      }
    }
  std::cout << "fits_fuzz_seeds: wrote " << count << " seeds into " << folder << "\n";
  return 0;
}
