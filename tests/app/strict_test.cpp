// Every mistake a new user makes, across every verb: one sentence on stderr that names the
// file (or the option) and the fault, in the one message style, with the exit code the
// README promises (0 all well, 1 an input had a problem, 2 usage). Most cases fail before
// any imaging; the frames are one tiny synthetic view. The JSON schemas of the event,
// scenario and track files are held to the readers: the files the tests write validate,
// the bad ones are refused by both.
#include <fstream>
#include <functional>
#include <map>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include "fit/json_file.hpp"
#include "fit/scenario.hpp"
#include "fit/strict_json.hpp"
#include "imaging/fits.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::run_command;
using occulta::test::shell_quote;

// One view ("east"), five 64-pixel frames ten minutes apart from 06:00.
const char* kScenario = R"({
  "id": "strict-event", "start": "2031-03-14T06:00:00", "cadence_s": 600, "frames": 5,
  "image": {"size_px": 64, "half_width_rs": 15, "occulter_rs": [2.5, 14.5]},
  "observers": [{"name": "east", "lon_deg": -60, "lat_deg": 0, "dist_au": 1.0}],
  "shell": {"lon_deg": 0, "lat_deg": 0, "half_angle_deg": 20, "aspect_ratio": 0.3,
            "apex": {"time": "2031-03-14T06:00:00", "height_rs": 2.0, "speed_km_s": 800}},
  "seed": 3
})";

json event_doc() {
  return {{"id", "strict-event"},
          {"views", {{{"name", "east"}, {"files", {"east/*.fits"}}, {"occulter_rs", {2.5, 14.5}}}}},
          {"window", {{"start", "2031-03-14T06:00:00.000"}, {"end", "2031-03-14T06:40:00.000"}}}};
}

json track_doc() {
  json points = json::array();
  for (int i = 1; i < 5; ++i)
    points.push_back({{"view", "east"}, {"time", "2031-03-14T06:" + std::to_string(i) + "0:00.000"}, {"pa_deg", 270.0},
                      {"height_rs", 4.0 + i}, {"origin", "analyst"}});
  return {{"schema", "occulta.track/1"}, {"event_id", "strict-event"}, {"points", points}};
}

// A track with a tie of two views, east and west, at one frame time (the good event has
// east only: against it, only what the reader refuses, and a tie click on a view it lacks).
json tied_track_doc() {
  json t = track_doc();
  const auto place = [](const char* view, double pa_deg) {
    return json{{"view", view}, {"time", "2031-03-14T06:20:00.000"}, {"pa_deg", pa_deg}, {"height_rs", 5.0}};
  };
  t["ties"] = json::array({{{"a", place("east", 270.0)}, {"b", place("west", 90.0)}, {"lon_deg", 10.0},
                            {"lat_deg", 0.0}, {"distance_rs", 5.5}, {"miss_rs", 0.01}}});
  return t;
}

json scenario_doc() { return json::parse(kScenario); }

json result_doc() {
  json shell = {{"lon_deg", 10.0}, {"lat_deg", -2.0}, {"tilt_deg", 15.0}, {"half_angle_deg", 30.0},
                {"aspect_ratio", 0.35}, {"speed_km_s", 1000.0}};
  return {{"schema", "occulta.result/1"}, {"event_id", "strict-event"}, {"status", "ok"},
          {"problems", json::array()},     {"views", json::array()},          {"shell", shell},
          {"boundary", {{"time", "2031-03-14T07:24:00.000"}, {"speed_km_s", 1000.0}, {"lon_deg", 10.0}, {"lat_deg", -2.0}}}};
}

// The one tiny event shared by every case (made once).
// The frames of the table's cases. The window case makes its own copy of the same event:
// CTest runs cases at once, and each must own the folders it writes into.
fs::path frames_dir(const std::string& name = "strict_frames") {
  static std::map<std::string, fs::path> made;
  if (!made.count(name)) made[name] = occulta::test::synthesize_event(name, kScenario) / "frames";
  return made[name];
}

struct Case {
  std::string name;
  std::string args;                  // after `occulta`; {D} is the case folder, {F} the frames folder
  int exit_code;
  std::vector<std::string> phrases;  // each must appear ({D}, {F} replaced); the first names the file or option
};

std::string filled(std::string text, const fs::path& dir) {
  for (const auto& [key, value] : {std::pair<std::string, std::string>{"{D}", dir.string()}, {"{F}", frames_dir().string()}})
    for (size_t at; (at = text.find(key)) != std::string::npos;) text.replace(at, key.size(), value);
  return text;
}

void write(const fs::path& path, const json& doc) { std::ofstream(path) << doc.dump(2); }

// Writes `doc` changed by `change` to D/<name> and returns its path.
fs::path variant(const fs::path& dir, const std::string& name, json doc, const std::function<void(json&)>& change) {
  change(doc);
  write(dir / name, doc);
  return dir / name;
}

}  // namespace

TEST_CASE("strict: bad inputs across every verb give one sentence and the promised exit code") {
  const fs::path d = occulta::test::scratch_dir("strict_cases");
  const fs::path f = frames_dir();
  // Events in the frames folder, so that their globs match the frames.
  const auto ev = [&](const std::string& name, const std::function<void(json&)>& change) {
    return variant(f, name, event_doc(), change);
  };
  ev("good.event.json", [](json&) {});
  ev("sorce.event.json", [](json& e) { e["sorce"] = {{"lon_deg", 0}, {"lat_deg", 0}}; });
  ev("nmae.event.json", [](json& e) { e["views"][0]["nmae"] = "x"; });
  ev("dotdot.event.json", [](json& e) { e["views"][0]["name"] = "../x"; });
  ev("slash_id.event.json", [](json& e) { e["id"] = "a/b"; });
  ev("dot_id.event.json", [](json& e) { e["id"] = ".hidden"; });
  ev("dist.event.json", [](json& e) { e["views"][0]["observer"] = {{"lon_deg", 0}, {"lat_deg", 0}, {"dist_au", 500}}; });
  ev("occulter.event.json", [](json& e) { e["views"][0]["occulter_rs"] = {0.5, 3.0}; });
  ev("source_type.event.json", [](json& e) { e["source"] = {{"lon_deg", "east"}, {"lat_deg", 0}}; });
  ev("window_order.event.json", [](json& e) { e["window"]["end"] = "2031-03-14T05:00:00"; });
  ev("window_date.event.json", [](json& e) { e["window"]["start"] = "2031-02-30T06:00:00"; });
  ev("window_empty.event.json", [](json& e) {
    e["window"] = {{"start", "2031-03-15T00:00:00"}, {"end", "2031-03-15T01:00:00"}};
  });
  ev("wind.event.json", [](json& e) { e["forecast"] = {{"wind_km_s", {10, 20}}}; });
  ev("mars.event.json", [](json& e) { e["forecast"] = {{"targets", {"mars"}}}; });
  ev("tragets.event.json", [](json& e) { e["forecast"] = {{"tragets", {"earth"}}}; });
  ev("schema.event.json", [](json& e) { e["schema"] = "occulta.event/2"; });
  ev("noviews.event.json", [](json& e) { e["views"] = json::array(); });
  std::ofstream(d / "broken.json") << "{\"id\": \"x\",\n  \"views\": [ oops ]}";
  std::ofstream(d / "huge.json") << R"({"id": 1e999})";
  std::ofstream(d / "empty.json") << "";
  fs::create_directories(d / "a_folder");
  std::ofstream(d / "a_file") << "not a folder";

  const auto sc = [&](const std::string& name, const std::function<void(json&)>& change) {
    return variant(d, name, scenario_doc(), change);
  };
  sc("cadense.scenario.json", [](json& s) { s["cadense_s"] = s["cadence_s"]; });
  sc("obsname.scenario.json", [](json& s) { s["observers"][0]["name"] = "../x"; });
  sc("slow.scenario.json", [](json& s) { s["shell"]["apex"]["speed_km_s"] = 20; });
  sc("tilt.scenario.json", [](json& s) { s["shell"]["tilt"] = 10; });
  sc("low.scenario.json", [](json& s) { s["shell"]["apex"]["height_rs"] = 0.5; });

  const auto tr = [&](const std::string& name, const std::function<void(json&)>& change) {
    return variant(d, name, track_doc(), change);
  };
  tr("good.track.json", [](json&) {});
  tr("case.track.json", [](json& t) { t["points"][0]["view"] = "East"; });
  tr("years.track.json", [](json& t) { t["points"][1]["time"] = "1999-03-14T06:20:00"; });
  tr("high.track.json", [](json& t) { t["points"][2]["height_rs"] = 4.0e6; });
  tr("noschema.track.json", [](json& t) { t.erase("schema"); });
  tr("other.track.json", [](json& t) { t["event_id"] = "another-event"; });
  tr("dotdot.track.json", [](json& t) { t["points"][0]["view"] = "../x"; });
  tr("heigth.track.json", [](json& t) { t["points"][0]["heigth_rs"] = 5.0; });
  tr("pa.track.json", [](json& t) { t["points"][0]["pa_deg"] = 400.0; });
  const auto ti = [&](const std::string& name, const std::function<void(json&)>& change) {
    return variant(d, name, tied_track_doc(), change);
  };
  ti("tiekey.track.json", [](json& t) { t["ties"][0]["lon"] = 1.0; });
  ti("tieself.track.json", [](json& t) { t["ties"][0]["b"]["view"] = "east"; });
  ti("tielat.track.json", [](json& t) { t["ties"][0]["lat_deg"] = 95.0; });
  ti("tieview.track.json", [](json& t) { t["ties"][0]["a"]["view"] = "eats"; });

  const auto re = [&](const std::string& name, const std::function<void(json&)>& change) {
    return variant(d, name, result_doc(), change);
  };
  re("good.result.json", [](json&) {});
  re("schema.result.json", [](json& r) { r["schema"] = "occulta.results/1"; });
  re("failed.result.json", [](json& r) { r["status"] = "failed"; });
  re("fast.result.json", [](json& r) { r["boundary"]["speed_km_s"] = 1e9; });
  re("crawl.result.json", [](json& r) { r["boundary"]["speed_km_s"] = 1e-6; });
  cv::Mat nan_pixels(8, 8, CV_32FC1, cv::Scalar(std::numeric_limits<float>::quiet_NaN()));
  occulta::imaging::write_fits(d / "nan.fits", nan_pixels, occulta::imaging::Header{});

  const std::string out = " --out {D}/out";
  const std::vector<Case> cases = {
      // Usage: unknown verbs and options name themselves and the nearest; bad option values.
      {"no verb", "", 2, {"a verb is required", "measure"}},
      {"unknown verb", "frobnicate", 2, {"unknown verb `frobnicate`", "the verbs are inspect"}},
      {"misspelt verb", "mesure {F}/good.event.json" + out, 2, {"`mesure`", "did you mean `measure`?"}},
      {"unknown option", "measure {F}/good.event.json --output {D}/x", 2, {"`--output`", "did you mean `--out`?"}},
      {"option typo", "forecast {D}/good.result.json --taget earth", 2, {"`--taget`", "did you mean `--target`?"}},
      {"missing argument", "measure", 2, {"`measure` needs more: input is required", "occulta measure --help"}},
      {"median value", "measure {F}/good.event.json --median 4" + out, 2, {"--median", "4 not in"}},
      {"apex law value", "measure {F}/good.event.json --apex-law cubic" + out, 2, {"--apex-law", "cubic"}},
      {"pa range", "maps {F}/good.event.json --pa 400" + out, 2, {"--pa", "400"}},
      {"unknown target", "forecast {D}/good.result.json --target mars", 2, {"--target", "\"mars\""}},
      {"wind range", "forecast {D}/good.result.json --wind 10,20", 2, {"--wind", "50 ≤ LO ≤ HI ≤ 5000 km/s"}},
      {"drag text", "forecast {D}/good.result.json --drag fast", 2, {"--drag", "not LO,HI"}},
      {"members", "forecast {D}/good.result.json --members 0", 2, {"--members", "0"}},
      // Files that are not what they should be.
      {"missing file", "measure {D}/nowhere.event.json" + out, 1, {"{D}/nowhere.event.json", "does not exist"}},
      {"folder for a file", "maps {D}/a_folder" + out, 1, {"{D}/a_folder", "is a folder; `maps` needs an event file"}},
      {"folder for a scenario", "synth {D}/a_folder" + out, 1, {"{D}/a_folder", "is a folder, not a JSON file"}},
      {"folder for a result", "forecast {D}/a_folder", 1, {"{D}/a_folder", "is a folder; `forecast` needs the result.json"}},
      {"broken json", "maps {D}/broken.json" + out, 1, {"{D}/broken.json", "not valid JSON", "line 2, column 14"}},
      {"huge number", "maps {D}/huge.json" + out, 1, {"{D}/huge.json", "a number too large"}},
      {"empty file", "maps {D}/empty.json" + out, 1, {"{D}/empty.json", "it is empty"}},
      {"result to measure", "measure {D}/good.result.json" + out, 1,
       {"{D}/good.result.json", "is a result file; `measure` needs an event file or a folder of frames"}},
      {"scenario to maps", "maps {D}/cadense.scenario.json" + out, 1, {"{D}/cadense.scenario.json", "is a scenario file"}},
      {"event to forecast", "forecast {F}/good.event.json", 1, {"{F}/good.event.json", "is an event file; `forecast` needs"}},
      {"track to synth", "synth {D}/good.track.json" + out, 1, {"{D}/good.track.json", "is a track file"}},
      {"out is a file", "measure {F}/good.event.json --out {D}/a_file", 1,
       {"{D}/a_file", "is a file, but --out needs a folder"}},
      {"out under a file", "forecast {D}/good.result.json --out {D}/a_file/sub", 1, {"{D}/a_file/sub", "cannot be made"}},
      {"demo elsewhere", "demo --sample {D}/nowhere" + out, 1, {"{D}/nowhere", "does not exist", "--sample DIR"}},
      {"demo wrong folder", "demo --sample {D}/a_folder" + out, 1, {"{D}/a_folder", "holds no *.event.json file"}},
      {"nan image", "inspect {D}/nan.fits", 1, {"{D}/nan.fits", "holds no finite pixel"}},
      // Event files: unknown keys, names, types, ranges.
      {"event unknown key", "measure {F}/sorce.event.json" + out, 1, {"{F}/sorce.event.json", "unknown key `sorce` — did you mean `source`?"}},
      {"view unknown key", "maps {F}/nmae.event.json" + out, 1, {"{F}/nmae.event.json", "`views[0].nmae` — did you mean `name`?"}},
      {"view name path", "measure {F}/dotdot.event.json" + out, 1, {"{F}/dotdot.event.json", "`views[0].name` is \"../x\""}},
      {"id with slash", "measure {F}/slash_id.event.json" + out, 1, {"{F}/slash_id.event.json", "`id` is \"a/b\""}},
      {"hidden id", "maps {F}/dot_id.event.json" + out, 1, {"{F}/dot_id.event.json", "not starting with '.'"}},
      {"observer distance", "measure {F}/dist.event.json" + out, 1,
       {"{F}/dist.event.json", "`views[0].observer.dist_au` is 500, outside the allowed 0.05 to 100 au"}},
      {"occulter range", "measure {F}/occulter.event.json" + out, 1, {"{F}/occulter.event.json", "`views[0].occulter_rs[0]` is 0.5"}},
      {"source type", "measure {F}/source_type.event.json" + out, 1, {"{F}/source_type.event.json", "`source.lon_deg` must be a number"}},
      {"window order", "measure {F}/window_order.event.json" + out, 1, {"{F}/window_order.event.json", "`window.end` comes before"}},
      {"window date", "measure {F}/window_date.event.json" + out, 1, {"{F}/window_date.event.json", "`window.start`", "February"}},
      {"forecast wind", "measure {F}/wind.event.json" + out, 1, {"{F}/wind.event.json", "forecast.wind_km_s is [10,20]"}},
      {"forecast target", "forecast {D}/good.result.json --event {F}/mars.event.json", 1, {"{F}/mars.event.json", "\"mars\""}},
      {"forecast key", "maps {F}/tragets.event.json" + out, 1, {"{F}/tragets.event.json", "did you mean `targets`?"}},
      {"event schema", "measure {F}/schema.event.json" + out, 1, {"{F}/schema.event.json", "`schema` is \"occulta.event/2\""}},
      {"no views", "measure {F}/noviews.event.json" + out, 1, {"{F}/noviews.event.json", "`views` must be a non-empty list"}},
      // Scenario files.
      {"scenario unknown key", "synth {D}/cadense.scenario.json" + out, 1,
       {"{D}/cadense.scenario.json", "unknown key `cadense_s` — did you mean `cadence_s`?"}},
      {"observer name path", "synth {D}/obsname.scenario.json" + out, 1, {"{D}/obsname.scenario.json", "`observers[0].name` is \"../x\""}},
      {"scenario speed", "synth {D}/slow.scenario.json" + out, 1, {"{D}/slow.scenario.json", "`shell.apex.speed_km_s` is 20"}},
      {"scenario cut key", "synth {D}/tilt.scenario.json" + out, 1, {"{D}/tilt.scenario.json", "`shell.tilt` — did you mean `tilt_deg`?"}},
      {"scenario height", "synth {D}/low.scenario.json" + out, 1, {"{D}/low.scenario.json", "`shell.apex.height_rs` is 0.5"}},
      // Track files, and a track against its event.
      {"track mis-cased view", "measure {F}/good.event.json --track {D}/case.track.json" + out, 1,
       {"{D}/case.track.json", "\"East\" is not a view of event \"strict-event\" — did you mean \"east\"?"}},
      {"track years away", "measure {F}/good.event.json --track {D}/years.track.json" + out, 1,
       {"{D}/years.track.json", "`points[1].time` 1999-03-14T06:20:00.000 lies outside view east's frames"}},
      {"track height", "measure {F}/good.event.json --track {D}/high.track.json" + out, 1,
       {"{D}/high.track.json", "`points[2].height_rs`", "outside the allowed 1 to 300 R☉"}},
      {"track schema", "measure {F}/good.event.json --track {D}/noschema.track.json" + out, 1,
       {"{D}/noschema.track.json", "`schema` is missing"}},
      {"track of another event", "measure {F}/good.event.json --track {D}/other.track.json" + out, 1,
       {"{D}/other.track.json", "is a track of event \"another-event\", not of \"strict-event\""}},
      {"track view path", "measure {F}/good.event.json --track {D}/dotdot.track.json" + out, 1,
       {"{D}/dotdot.track.json", "`points[0].view` is \"../x\""}},
      {"track unknown key", "measure {F}/good.event.json --track {D}/heigth.track.json" + out, 1,
       {"{D}/heigth.track.json", "`points[0].heigth_rs` — did you mean `height_rs`?"}},
      {"track pa", "measure {F}/good.event.json --track {D}/pa.track.json" + out, 1,
       {"{D}/pa.track.json", "`points[0].pa_deg` is 400"}},
      {"tie unknown key", "measure {F}/good.event.json --track {D}/tiekey.track.json" + out, 1,
       {"{D}/tiekey.track.json", "`ties[0].lon` — did you mean `lon_deg`?"}},
      {"tie of one view", "measure {F}/good.event.json --track {D}/tieself.track.json" + out, 1,
       {"{D}/tieself.track.json", "`ties[0]` ties view east to itself"}},
      {"tie latitude", "measure {F}/good.event.json --track {D}/tielat.track.json" + out, 1,
       {"{D}/tielat.track.json", "`ties[0].lat_deg` is 95.0, outside the allowed -90 to 90"}},
      {"tie view", "measure {F}/good.event.json --track {D}/tieview.track.json" + out, 1,
       {"{D}/tieview.track.json", "`ties[0].a.view` \"eats\" is not a view of event \"strict-event\" — did you mean \"east\"?"}},
      {"track is a folder", "measure {F}/good.event.json --track {D}/a_folder" + out, 1, {"{D}/a_folder", "is a folder"}},
      // Result files given to forecast.
      {"result schema", "forecast {D}/schema.result.json", 1, {"{D}/schema.result.json", "`schema` is \"occulta.results/1\""}},
      {"failed result", "forecast {D}/failed.result.json", 1, {"{D}/failed.result.json", "has status \"failed\""}},
      {"result too fast", "forecast {D}/fast.result.json", 1,
       {"{D}/fast.result.json", "boundary.speed_km_s is 1e+09, outside the allowed 50 to 5000 km/s"}},
      {"result too slow", "forecast {D}/crawl.result.json", 1, {"{D}/crawl.result.json", "boundary.speed_km_s is 1e-06"}},
  };
  CHECK(cases.size() >= 40);
  const std::string bin = shell_quote(occulta::test::occulta_binary().string());
  for (const Case& c : cases) {
    CAPTURE(c.name);
    const std::string args = filled(c.args, d);
    CAPTURE(args);
    // inspect lists every file on stdout, the unusable ones with their sentence; every
    // other verb says what stopped it on stderr.
    const bool listing = c.args.starts_with("inspect");
    const auto run = run_command("{ " + bin + " " + args + (listing ? " 2>/dev/null; }" : " 2>&1 >/dev/null; }"));
    CAPTURE(run.output);
    CHECK(run.exit_code == c.exit_code);
    for (const std::string& phrase : c.phrases) CHECK(run.output.find(filled(phrase, d)) != std::string::npos);
    // One sentence on one line, in the one prefix style, with no library's own text.
    CHECK(run.output.find('\n') == run.output.size() - 1);
    if (!listing) CHECK(run.output.rfind(c.exit_code == 2 ? "occulta: usage: " : "occulta: error: ", 0) == 0);
    for (const char* internal : {"json.exception", "basic_filebuf", "filesystem error", "std::", "what()"})
      CHECK(run.output.find(internal) == std::string::npos);
    CHECK(!fs::exists(d / "out/result.json"));
  }
  // Refused before any work: no --out folder was made.
  CHECK(!fs::exists(d / "out"));
}

TEST_CASE("strict: the window is applied, frames outside it named, and a window without frames is a problem") {
  const fs::path f = frames_dir("strict_window_frames");
  const fs::path d = occulta::test::scratch_dir("strict_window");
  {
    json empty = event_doc();
    empty["window"] = {{"start", "2031-03-15T00:00:00"}, {"end", "2031-03-15T01:00:00"}};
    write(f / "window_empty.event.json", empty);
  }
  json event = event_doc();
  event["window"] = {{"start", "2031-03-14T06:05:00"}, {"end", "2031-03-14T06:45:00"}};  // leaves out 06:00
  write(f / "window.event.json", event);
  const std::string bin = shell_quote(occulta::test::occulta_binary().string());
  const auto run = run_command(bin + " measure --quiet " + shell_quote((f / "window.event.json").string()) + " --out " +
                               shell_quote((d / "out").string()));
  INFO(run.output);
  const json result = occulta::fit::read_json_file(d / "out/result.json");
  REQUIRE(result["views"].size() == 1);
  CHECK(result["views"][0]["frames_used"] == 4);
  REQUIRE(result["views"][0]["frames_outside_window"].size() == 1);
  CHECK(result["views"][0]["frames_outside_window"][0].get<std::string>().ends_with("east/east_000.fits"));
  CHECK(occulta::test::slurp(d / "out/result.csv").find("east_frames_outside_window") != std::string::npos);
  // Times with milliseconds, as everywhere; no problem text repeats itself.
  for (const auto& p : result["problems"]) {
    const std::string text = p.get<std::string>();
    CHECK(text.find("no CME found: no CME found") == std::string::npos);
  }

  const auto empty = run_command(bin + " measure --quiet " + shell_quote((f / "window_empty.event.json").string()) +
                                 " --out " + shell_quote((d / "empty").string()));
  CHECK(empty.exit_code == 1);
  CHECK(empty.output.find("occulta: problem: view east: none of its 5 frames lies in the event's window") !=
        std::string::npos);
  const json none = occulta::fit::read_json_file(d / "empty/result.json");
  CHECK(none["status"] == "failed");

  // The files this test and the synthesis wrote validate against their schemas; the bad
  // ones of the table above are refused by the schemas as by the readers.
  const auto validate = [](const std::string& schema, const fs::path& doc) {
    return occulta::test::run_python("tests/external/validate_schema.py",
                                     shell_quote(occulta::test::source_path("schemas/" + schema).string()) + " " +
                                         shell_quote(doc.string()));
  };
  for (const auto& [schema_name, doc_path] : std::vector<std::pair<std::string, fs::path>>{
           {"event.schema.json", f / "strict-event.event.json"},
           {"event.schema.json", f / "window.event.json"},
           {"event.schema.json", occulta::test::source_path("sample_frames/sample-2031-03-14.event.json")},
           {"scenario.schema.json", f.parent_path() / "s.scenario.json"},
           {"scenario.schema.json", occulta::test::source_path("sample_frames/sample.scenario.json")},
           {"track.schema.json", d / "out/track.json"},
           {"result.schema.json", d / "out/result.json"},
           {"result.schema.json", d / "empty/result.json"}}) {
    const fs::path doc = doc_path;  // a copy: clang 14 cannot capture a structured binding
    const auto valid = validate(schema_name, doc);
    CHECK_MESSAGE(valid.exit_code == 0, (doc.string() + ": " + valid.output));
  }
  for (const auto& [schema_name, doc_path] : std::vector<std::pair<std::string, fs::path>>{
           {"event.schema.json", f / "sorce.event.json"},           {"event.schema.json", f / "nmae.event.json"},
           {"event.schema.json", f / "dotdot.event.json"},          {"event.schema.json", f / "slash_id.event.json"},
           {"event.schema.json", f / "dot_id.event.json"},          {"event.schema.json", f / "dist.event.json"},
           {"event.schema.json", f / "occulter.event.json"},        {"event.schema.json", f / "source_type.event.json"},
           {"event.schema.json", f / "wind.event.json"},            {"event.schema.json", f / "tragets.event.json"},
           {"event.schema.json", f / "schema.event.json"},          {"event.schema.json", f / "noviews.event.json"}}) {
    const fs::path doc = doc_path;  // a copy: clang 14 cannot capture a structured binding
    CAPTURE(doc);
    CHECK(validate(schema_name, doc).exit_code == 1);
  }
}

TEST_CASE("strict: schemas refuse the bad scenario and track files as the readers do") {
  const fs::path d = occulta::test::scratch_dir("strict_schema_bad");
  const auto validate = [](const std::string& schema, const fs::path& doc) {
    return occulta::test::run_python("tests/external/validate_schema.py",
                                     shell_quote(occulta::test::source_path("schemas/" + schema).string()) + " " +
                                         shell_quote(doc.string()));
  };
  const std::vector<std::pair<std::string, std::function<void(json&)>>> scenarios = {
      {"cadense", [](json& s) { s["cadense_s"] = 600; }},
      {"obsname", [](json& s) { s["observers"][0]["name"] = "../x"; }},
      {"slow", [](json& s) { s["shell"]["apex"]["speed_km_s"] = 20; }},
      {"tilt", [](json& s) { s["shell"]["tilt"] = 10; }},
      {"low", [](json& s) { s["shell"]["apex"]["height_rs"] = 0.5; }},
      {"both", [](json& s) { s["shells"] = json::array({s["shell"]}); }},
      {"neither", [](json& s) { s.erase("shell"); }},
      {"clock", [](json& s) { s["observers"][0]["cadence_s"] = 0; }},
      {"point", [](json& s) {
         s["point_sources"] = json::array({{{"view", "x"}, {"from", {{"pa_deg", 10}, {"height_rs", 5}}}, {"to", {{"pa_deg", 20}}},
                                            {"brightness_bsun", 1e-9}}});
       }}};
  for (const auto& [case_name, change] : scenarios) {
    const std::string name = case_name;  // a copy: clang 14 cannot capture a structured binding
    CAPTURE(name);
    CHECK(validate("scenario.schema.json", variant(d, name + ".scenario.json", scenario_doc(), change)).exit_code == 1);
  }
  const std::vector<std::pair<std::string, std::function<void(json&)>>> tracks = {
      {"high", [](json& t) { t["points"][2]["height_rs"] = 4.0e6; }},
      {"noschema", [](json& t) { t.erase("schema"); }},
      {"dotdot", [](json& t) { t["points"][0]["view"] = "../x"; }},
      {"heigth", [](json& t) { t["points"][0]["heigth_rs"] = 5.0; }},
      {"pa", [](json& t) { t["points"][0]["pa_deg"] = 400.0; }},
      {"tiekey", [](json& t) { t = tied_track_doc(), t["ties"][0]["lon"] = 1.0; }},
      {"tielat", [](json& t) { t = tied_track_doc(), t["ties"][0]["lat_deg"] = 95.0; }}};
  for (const auto& [case_name, change] : tracks) {
    const std::string name = case_name;  // a copy: clang 14 cannot capture a structured binding
    CAPTURE(name);
    CHECK(validate("track.schema.json", variant(d, name + ".track.json", track_doc(), change)).exit_code == 1);
  }
  CHECK(validate("track.schema.json", variant(d, "good.track.json", track_doc(), [](json&) {})).exit_code == 0);
  CHECK(validate("track.schema.json", variant(d, "tied.track.json", tied_track_doc(), [](json&) {})).exit_code == 0);
  CHECK(validate("scenario.schema.json", variant(d, "good.scenario.json", scenario_doc(), [](json&) {})).exit_code == 0);
  // Several CMEs, a view on its own clock, a drifting point: valid, as read_scenario reads them.
  const fs::path several = variant(d, "several.scenario.json", scenario_doc(), [](json& s) {
    s["shells"] = json::array({s["shell"], s["shell"]});
    s.erase("shell");
    s["observers"][0]["cadence_s"] = 480;
    s["observers"][0]["start_offset_s"] = 120;
    s["point_sources"] = json::array({{{"view", s["observers"][0]["name"]},
                                       {"from", {{"pa_deg", 10}, {"height_rs", 5}}},
                                       {"to", {{"pa_deg", 20}, {"height_rs", 6}}},
                                       {"brightness_bsun", 1e-9}}});
  });
  CHECK(validate("scenario.schema.json", several).exit_code == 0);
  CHECK(occulta::fit::read_scenario(several).shells.size() == 2);
}

TEST_CASE("strict: names that become file names are letters, digits, '-', '_' and '.' only") {
  using occulta::fit::is_safe_name;
  CHECK(is_safe_name("east"));
  CHECK(is_safe_name("sample-2031-03-14"));
  CHECK(is_safe_name("cor2_a.v1"));
  CHECK_FALSE(is_safe_name(""));
  CHECK_FALSE(is_safe_name("../x"));
  CHECK_FALSE(is_safe_name("a/b"));
  CHECK_FALSE(is_safe_name(".hidden"));
  CHECK_FALSE(is_safe_name("a..b"));
  CHECK_FALSE(is_safe_name("two words"));
  CHECK_FALSE(is_safe_name("ëast"));
  // The nearest known word, by edit distance, and none when every one is far.
  CHECK(occulta::fit::nearest_word("sorce", {"id", "views", "source", "window"}) == "source");
  CHECK(occulta::fit::nearest_word("--output", {"--out", "--track"}) == "--out");
  CHECK(occulta::fit::nearest_word("frobnicate", {"inspect", "measure", "maps"}).empty());
}

TEST_CASE("strict: a path that is not UTF-8 is written into JSON with U+FFFD, not a crash") {
  // Linux paths are any bytes; JSON text is UTF-8 (RFC 8259 §8.1). A view folder named
  // "e\xe9st" made `measure`'s result.json (its provenance) and `inspect --json` throw
  // inside nlohmann's writer: "an unexpected internal fault". fit::json_text writes such
  // bytes as U+FFFD.
  CHECK(occulta::fit::json_text(json{{"path", "e\xe9st/a.fits"}}) == "{\"path\":\"e\xef\xbf\xbdst/a.fits\"}");
  const fs::path dir = occulta::test::scratch_dir("strict_not_utf8") / "e\xe9st";
  fs::create_directories(dir);
  fs::copy_file(occulta::test::source_path("sample_frames/east/east_000.fits"), dir / "east_000.fits",
                fs::copy_options::overwrite_existing);
  const auto run = run_command(shell_quote(occulta::test::occulta_binary().string()) + " inspect --json " +
                               shell_quote((dir / "east_000.fits").string()));
  INFO(run.output);
  CHECK(run.exit_code == 0);
  CHECK(run.output.find("e\xef\xbf\xbdst/east_000.fits") != std::string::npos);
  occulta::fit::write_json_file(dir.parent_path() / "w.json", json{{"path", dir.string()}});
  CHECK(occulta::fit::read_json_file(dir.parent_path() / "w.json")["path"].get<std::string>().find("\xef\xbf\xbd") !=
        std::string::npos);
}
