// The polar running differences kept in a temporary file (MeasurementOptions::
// polar_scratch_dir, what `measure` does: memory flat in frames, issue 18) measure the same
// as kept in memory (what the window does): on the committed sample, the same result.json
// and result.csv text, the same track and the same pictures byte for byte; nothing is
// left in the scratch folder.
#include <doctest/doctest.h>

#include "app/measure_pictures.hpp"
#include "fit/measurement.hpp"
#include "fit/result_file.hpp"
#include "fit/track.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
}  // namespace

TEST_CASE("measure scratch: the frames in a temporary file give the same result, track and pictures as in memory") {
  const fs::path dir = occulta::test::scratch_dir("measure-scratch");
  const fs::path event = occulta::test::source_path("sample_frames/sample-2031-03-14.event.json");
  const fs::path scratch = dir / "scratch";
  fs::create_directories(scratch);

  occulta::fit::MeasurementOptions in_memory;
  occulta::fit::MeasurementOptions in_file;
  in_file.polar_scratch_dir = scratch;
  const occulta::fit::Measurement a = occulta::fit::measure_event(event, {}, in_memory);
  const occulta::fit::Measurement b = occulta::fit::measure_event(event, {}, in_file);
  REQUIRE(a.views.size() == 2);
  REQUIRE(b.views.size() == 2);
  CHECK(a.views[0].polar.frames.in_memory());
  CHECK_FALSE(b.views[0].polar.frames.in_memory());
  CHECK(a.status == "ok");
  CHECK(occulta::fit::result_json(a).dump() == occulta::fit::result_json(b).dump());
  CHECK(occulta::fit::result_csv(a) == occulta::fit::result_csv(b));
  occulta::fit::write_track(dir / "a.track.json", occulta::fit::used_track(a));
  occulta::fit::write_track(dir / "b.track.json", occulta::fit::used_track(b));
  CHECK(occulta::test::slurp(dir / "a.track.json") == occulta::test::slurp(dir / "b.track.json"));

  occulta::app::write_measurement_pictures(a, dir / "a");
  occulta::app::write_measurement_pictures(b, dir / "b");
  int pictures = 0;
  for (const auto& entry : fs::recursive_directory_iterator(dir / "a")) {
    if (!entry.is_regular_file()) continue;
    const fs::path other = dir / "b" / fs::relative(entry.path(), dir / "a");
    CAPTURE(other);
    REQUIRE(fs::exists(other));
    CHECK(occulta::test::slurp(entry.path()) == occulta::test::slurp(other));
    ++pictures;
  }
  CHECK(pictures == 6);  // per view time_height.png, front.png, shell.png
  CHECK(fs::is_empty(scratch));
}
