// The one measurement (fit/measurement.hpp) and `occulta measure`: the verb's result.json
// (but its provenance), result.csv and track.json are exactly what the library's writers
// (fit/result_file.hpp, fit/track.hpp) make of the same call — run here on a worker
// thread, as the window runs it — on the committed sample, with and without an
// analyst's track; the progress it reports comes in stage order (every view's chain, then
// the rest view by view); and the checksum policy in its options decides whether a
// damaged frame is read.
#include <algorithm>
#include <thread>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/json_file.hpp"
#include "fit/measurement.hpp"
#include "fit/measurement_shell.hpp"
#include "fit/result_file.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::fit::MeasurementProgress;
using occulta::fit::MeasurementStage;
using occulta::test::shell_quote;

struct Measured {
  occulta::fit::Measurement measurement;
  std::vector<MeasurementProgress> progress;
};

// The library call on a worker thread; progress is recorded as it comes.
Measured measure_on_worker(const fs::path& event, const fs::path& track, const fs::path& out) {
  Measured m;
  occulta::fit::MeasurementOptions options;
  options.result_name = (out / "result.json").string();  // as measure names it
  std::thread worker([&] {
    m.measurement = occulta::fit::measure_event(event, track, options,
                                                [&](const MeasurementProgress& p) { m.progress.push_back(p); });
  });
  worker.join();
  return m;
}

// measure's files against the library's writers of the same measurement.
void check_files_are_the_writers(const Measured& m, const fs::path& out) {
  json written = occulta::fit::read_json_file(out / "result.json");
  REQUIRE(written.contains("provenance"));
  const json provenance = written["provenance"];
  written.erase("provenance");
  // Through text, as the file went: NaN is null there.
  const json library = json::parse(occulta::fit::result_json(m.measurement).dump());
  CHECK(written == library);
  CHECK(occulta::test::slurp(out / "result.csv") == occulta::fit::result_csv(m.measurement));
  const fs::path track_copy = out.parent_path() / (out.filename().string() + "-track.json");
  occulta::fit::write_track(track_copy, occulta::fit::used_track(m.measurement));
  CHECK(occulta::test::slurp(out / "track.json") == occulta::test::slurp(track_copy));
  // The inputs provenance hashes are the measurement's own list.
  REQUIRE(provenance["inputs"].size() == m.measurement.inputs.size());
  for (std::size_t i = 0; i < m.measurement.inputs.size(); ++i)
    CHECK(provenance["inputs"][i]["path"] == m.measurement.inputs[i].string());
}

// Stages in order: the chain per view (frames counting up); then front and kinematics per
// view; then shell, arrival, done once each.
void check_progress(const Measured& m, std::size_t views) {
  const auto& p = m.progress;
  REQUIRE(!p.empty());
  std::size_t k = 0;
  for (std::size_t v = 0; v < views; ++v) {
    const std::string name = m.measurement.views[v].name;
    CAPTURE(name);
    REQUIRE(k < p.size());
    CHECK(p[k].stage == MeasurementStage::chain);
    CHECK(p[k].frame == 0);
    const int frame_count = p[k].frame_count;
    CHECK(frame_count == 16);  // the sample's frames per view, all inside its window
    int last = 0;
    // The view's reports: up to the next view's first (frame 0) or another stage.
    for (const std::size_t first = k; k < p.size() && p[k].stage == MeasurementStage::chain && (k == first || p[k].frame > 0);
         ++k) {
      CHECK(p[k].view == name);
      CHECK(p[k].view_index == static_cast<int>(v));
      CHECK(p[k].view_count == static_cast<int>(views));
      CHECK(p[k].frame >= last);
      last = p[k].frame;
    }
    // One report per running difference: every frame but the first.
    CHECK(last == static_cast<int>(m.measurement.views[v].polar.frames.size()));
    CHECK(last == m.measurement.views[v].frames_used - 1);
  }
  for (std::size_t v = 0; v < views; ++v) {
    const std::string name = m.measurement.views[v].name;
    CAPTURE(name);
    for (const MeasurementStage stage : {MeasurementStage::front, MeasurementStage::kinematics}) {
      REQUIRE(k < p.size());
      CHECK(p[k].stage == stage);
      CHECK(p[k].view == name);
      ++k;
    }
  }
  for (const MeasurementStage stage : {MeasurementStage::shell, MeasurementStage::arrival, MeasurementStage::done}) {
    REQUIRE(k < p.size());
    CHECK(std::string(occulta::fit::to_string(p[k].stage)) == occulta::fit::to_string(stage));
    CHECK(p[k].view.empty());
    ++k;
  }
  CHECK(k == p.size());
}

}  // namespace

TEST_CASE("measurement: measure's files are the library's writers of the same call, with and without a track") {
  const fs::path dir = occulta::test::scratch_dir("measurement-writers");
  const fs::path event = occulta::test::source_path("sample_frames/sample-2031-03-14.event.json");
  const std::string bin = shell_quote(occulta::test::occulta_binary().string());

  const fs::path out = dir / "auto";
  const auto run = occulta::test::run_command(bin + " measure --quiet " + shell_quote(event.string()) + " --out " +
                                              shell_quote(out.string()));
  INFO(run.output);
  REQUIRE(run.exit_code == 0);
  const Measured automatic = measure_on_worker(event, {}, out);
  CHECK(automatic.measurement.status == "ok");
  REQUIRE(automatic.measurement.views.size() == 2);
  CHECK(automatic.measurement.shell.fit.has_value());
  CHECK(automatic.measurement.arrival_made);
  check_files_are_the_writers(automatic, out);
  check_progress(automatic, 2);

  // An analyst's track for one view: every other automatic point of "east".
  json points = json::array();
  const json used = occulta::fit::read_json_file(out / "track.json");
  int n = 0;
  for (json p : used["points"])
    if (p["view"] == "east" && n++ % 2 == 0) {
      p["origin"] = "analyst";
      points.push_back(p);
    }
  REQUIRE(points.size() >= 4);
  const fs::path track = dir / "east.track.json";
  occulta::test::spit(track, json{{"schema", "occulta.track/1"}, {"event_id", used["event_id"]}, {"points", points}}.dump());
  const fs::path out_track = dir / "track";
  const auto run_track = occulta::test::run_command(bin + " measure --quiet " + shell_quote(event.string()) + " --track " +
                                                    shell_quote(track.string()) + " --out " + shell_quote(out_track.string()));
  INFO(run_track.output);
  REQUIRE(run_track.exit_code <= 1);
  const Measured analyst = measure_on_worker(event, track, out_track);
  REQUIRE(analyst.measurement.views.size() == 2);
  CHECK(analyst.measurement.views[0].by_analyst);
  CHECK(!analyst.measurement.views[1].by_analyst);
  CHECK(analyst.measurement.views[0].points.size() + analyst.measurement.views[0].censored.total() == points.size());
  check_files_are_the_writers(analyst, out_track);
  check_progress(analyst, 2);
}

TEST_CASE("measurement: the checksum policy in the options refuses or reads a frame whose CHECKSUM does not match") {
  const fs::path dir = occulta::test::scratch_dir("measurement-checksum");
  fs::copy(occulta::test::source_path("sample_frames"), dir / "sample", fs::copy_options::recursive);
  // One header comment changed after writing: the HDU's CHECKSUM no longer matches (FITS
  // Standard 4.0 §4.4.2.7), the pixels are untouched.
  const fs::path damaged = dir / "sample" / "east" / "east_005.fits";
  std::string bytes = occulta::test::slurp(damaged);
  const std::size_t at = bytes.find("detector counts");
  REQUIRE(at != std::string::npos);
  bytes[at] = 'D';
  occulta::test::spit(damaged, bytes);
  const fs::path event = dir / "sample" / "sample-2031-03-14.event.json";

  const auto east_frames_used = [](const occulta::fit::Measurement& m) {
    REQUIRE(!m.views.empty());
    REQUIRE(m.views[0].name == "east");
    return m.views[0].frames_used;
  };
  const auto names_damaged = [](const occulta::fit::Measurement& m) {
    return std::any_of(m.problems.begin(), m.problems.end(), [](const std::string& p) {
      return p.find("east_005.fits") != std::string::npos && p.find("CHECKSUM") != std::string::npos;
    });
  };
  // The process-wide policy set the other way each time: only the options' can decide.
  occulta::imaging::set_checksum_policy(occulta::imaging::ChecksumPolicy::Warn, [](const std::string&) {});
  occulta::fit::MeasurementOptions options;
  options.checksum_policy = occulta::imaging::ChecksumPolicy::Refuse;
  const occulta::fit::Measurement refused = occulta::fit::measure_event(event, {}, options);
  CHECK(names_damaged(refused));
  CHECK(east_frames_used(refused) == 15);
  CHECK(refused.views[1].frames_used == 16);

  occulta::imaging::set_checksum_policy(occulta::imaging::ChecksumPolicy::Refuse);
  options.checksum_policy = occulta::imaging::ChecksumPolicy::Warn;
  const occulta::fit::Measurement read = occulta::fit::measure_event(event, {}, options);
  CHECK(!names_damaged(read));
  CHECK(east_frames_used(read) == 16);
  occulta::imaging::set_checksum_policy(occulta::imaging::ChecksumPolicy::Refuse);
}

// measure_event finds each view's fronts on a thread of its own as soon as that view's
// imaging is done, beside the next view's imaging; the window runs the two parts apart
// (image_event, then measure_imaged, which finds the views' fronts side by side). Both
// must give the same measurement, word for word and bit for bit.
TEST_CASE("measurement: measure_event equals image_event then measure_imaged, to the bit") {
  const fs::path event = occulta::test::source_path("sample_frames/sample-2031-03-14.event.json");
  const occulta::fit::MeasurementInput input = occulta::fit::load_measurement_input(event);
  occulta::fit::MeasurementOptions options;
  const occulta::fit::Measurement whole = occulta::fit::measure_event(input, options);
  const occulta::fit::Measurement parts =
      occulta::fit::measure_imaged(input, occulta::fit::image_event(input, options), options);
  REQUIRE(whole.views.size() == 2);
  CHECK(whole.shell.fit.has_value());
  // dump() writes every double to its shortest round-trip text: equal text, equal bits.
  CHECK(occulta::fit::result_json(whole).dump() == occulta::fit::result_json(parts).dump());
  CHECK(occulta::fit::result_csv(whole) == occulta::fit::result_csv(parts));
  const occulta::fit::Track whole_track = occulta::fit::used_track(whole), parts_track = occulta::fit::used_track(parts);
  REQUIRE(whole_track.points.size() == parts_track.points.size());
  CHECK(!whole_track.points.empty());
  for (std::size_t k = 0; k < whole_track.points.size(); ++k) {
    CHECK(whole_track.points[k].utc_s == parts_track.points[k].utc_s);
    CHECK(whole_track.points[k].pa_deg == parts_track.points[k].pa_deg);
    CHECK(whole_track.points[k].height_rs == parts_track.points[k].height_rs);
  }
}

// The shell's outer-edge fit starts before the fronts' rims are found, taking every found
// front to have one (fit/measurement_shell.cpp). A found front without a rim must leave
// that fit to the views that have one, as if the view were not there: made again, never
// the fit started over both views.
TEST_CASE("measurement: a found front without a rim leaves the shell to the views that have one") {
  const fs::path event = occulta::test::source_path("sample_frames/sample-2031-03-14.event.json");
  const occulta::fit::MeasurementInput input = occulta::fit::load_measurement_input(event);
  const occulta::fit::Measurement measured = occulta::fit::measure_event(input, {});
  REQUIRE(measured.views.size() == 2);
  std::vector<occulta::fit::ViewMeasurement> views = measured.views;
  REQUIRE(views[0].front.found);
  REQUIRE(views[1].front.found);
  views[0].front.last_frame = views[0].front.onset_frame - 1;  // no frames of the chain: no rim, no outer edge
  std::vector<std::string> problems_both, problems_alone;
  const occulta::fit::ShellMeasurement both = occulta::fit::measure_shell(views, std::nullopt, "auto", problems_both);
  const occulta::fit::ShellMeasurement alone =
      occulta::fit::measure_shell({views[1]}, std::nullopt, "auto", problems_alone);
  REQUIRE(both.fit.has_value());
  REQUIRE(alone.fit.has_value());
  CHECK(both.views == std::vector<std::string>{views[1].name});
  CHECK(both.points.size() == alone.points.size());
  // The merged fit carries the outer fit's part in its systematic σ and its law: equal bits.
  CHECK(both.fit->systematic == alone.fit->systematic);
  CHECK(both.fit->sigma == alone.fit->sigma);
  CHECK(both.fit->covariance == alone.fit->covariance);
  CHECK(both.fit->law.speed_km_s == alone.fit->law.speed_km_s);

  // The same when the rim-less front has outer edges: its frames hold no data, so no rim
  // is found, but its leading edges remain. They belong to no view fitted and must not
  // be credited to another (nor, when it comes last, to a view that does not exist).
  for (const bool last : {false, true}) {
    CAPTURE(last);
    std::vector<occulta::fit::ViewMeasurement> blind{measured.views[0], measured.views[1]};
    occulta::fit::ViewMeasurement& ruined = blind[last ? 1 : 0];
    const occulta::fit::ViewMeasurement& kept = blind[last ? 0 : 1];
    occulta::imaging::PolarFrames empty_frames;
    for (const cv::Mat& frame : ruined.polar.frames)
      empty_frames.push_back(cv::Mat(frame.size(), frame.type(), cv::Scalar(std::numeric_limits<float>::quiet_NaN())));
    ruined.polar.frames = std::move(empty_frames);
    REQUIRE(ruined.front.found);
    std::vector<std::string> problems_blind, problems_kept;
    const occulta::fit::ShellMeasurement with = occulta::fit::measure_shell(blind, std::nullopt, "auto", problems_blind);
    const occulta::fit::ShellMeasurement without = occulta::fit::measure_shell({kept}, std::nullopt, "auto", problems_kept);
    REQUIRE(with.fit.has_value());
    REQUIRE(without.fit.has_value());
    CHECK(with.views == std::vector<std::string>{kept.name});
    CHECK(with.fit->systematic == without.fit->systematic);
    CHECK(with.fit->sigma == without.fit->sigma);
    CHECK(with.fit->law.speed_km_s == without.fit->law.speed_km_s);
  }
}
