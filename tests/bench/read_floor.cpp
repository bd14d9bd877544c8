// tests/bench/read_floor.cpp — the floor the whole-process benchmark (maps_bench) compares
// `occulta maps` with: a bare program that only opens each FITS file named on the command
// line with cfitsio, reads (and so decompresses) its first image as float with NaN for
// blanks and BSCALE/BZERO applied (what imaging::read_fits also delivers), and closes it.
// Links cfitsio alone. Prints the number of finite pixels, so nothing is optimised away.
#include <fitsio.h>

#include <cmath>
#include <cstdio>
#include <vector>

int main(int argc, char** argv) {
  long long finite = 0;
  std::vector<float> pixels;
  for (int i = 1; i < argc; ++i) {
    fitsfile* file = nullptr;
    int status = 0, naxis = 0, any_null = 0;
    long size[2] = {0, 0};
    float null_value = NAN;
    // fits_open_image moves to the first HDU holding an image (a tile-compressed image
    // lives in a binary-table extension; cfitsio presents it as an image).
    fits_open_image(&file, argv[i], READONLY, &status);
    fits_get_img_dim(file, &naxis, &status);
    fits_get_img_size(file, 2, size, &status);
    if (status == 0 && naxis == 2) {
      pixels.resize(std::size_t(size[0]) * std::size_t(size[1]));
      fits_read_img(file, TFLOAT, 1, size[0] * size[1], &null_value, pixels.data(), &any_null, &status);
      for (float v : pixels) finite += std::isfinite(v);
    }
    int close_status = 0;
    if (file) fits_close_file(file, &close_status);
    if (status || naxis != 2) {
      char text[FLEN_STATUS];
      fits_get_errstatus(status, text);
      std::fprintf(stderr, "read_floor: %s: %s\n", argv[i], status ? text : "not a 2-D image");
      return 1;
    }
  }
  std::printf("%lld\n", finite);
  return 0;
}
