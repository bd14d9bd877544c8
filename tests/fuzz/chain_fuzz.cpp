// tests/fuzz/chain_fuzz.cpp — libFuzzer target: header → geometry → the chain's first
// frame. Bytes read as FITS; when they make an image with a usable header, its geometry,
// time, occulter radii and the first steps of the imaging chain (grid, registration,
// polar unwrapping: imaging/chain.hpp) run on it. Every step must end in a result or an
// InputError. Images above 256×256 are skipped: the harness's memory, not a product limit.
#include <span>

#include "imaging/calibrate.hpp"
#include "imaging/fits.hpp"
#include "imaging/geometry.hpp"
#include "imaging/input_error.hpp"
#include "imaging/polar.hpp"
#include "imaging/register.hpp"
#include "imaging/time.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace occulta::imaging;
  try {
    const FitsImage image = read_fits_memory(std::as_bytes(std::span(data, size)), "fuzz input");
    if (image.pixels.cols > 256 || image.pixels.rows > 256) return 0;
    read_frame_time(image.header, image.source);
    const ImageGeometry geometry = read_geometry(image.header, image.source);
    const RegisteredGrid grid = grid_for_view(geometry);
    if (grid.width > 256 || grid.height > 256) return 0;
    const Registration registration = make_registration(geometry, grid);
    cv::Mat registered;
    register_frame(image.pixels, registration, registered);
    const std::optional<OcculterRadii> from_header = header_occulter_radii(image.header);
    const OcculterRadii radii = from_header ? *from_header : estimate_occulter_radii(registered, grid, image.source);
    const PolarGrid polar = make_polar_grid(grid, radii.inner_rs, radii.outer_rs);
    if (static_cast<double>(polar.pa_count) * polar.height_count > 4e6) return 0;
    cv::Mat unwrapped;
    to_polar(registered, make_polar_maps(registration, grid, polar), unwrapped);
  } catch (const InputError&) {
  }
  return 0;
}
