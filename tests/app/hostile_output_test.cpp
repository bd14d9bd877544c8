// tests/app/hostile_output_test.cpp — outputs whole or not at all (issue 13): `synth` and
// `measure` killed with SIGKILL at several points leave no file under its final name that
// is truncated, and a re-run gives the same outputs as an uninterrupted run; synth clears
// its own earlier frames; --out never lands where the inputs' globs read frames.
//
// The kill points are taken from the run's own progress (the k-th file to appear in the
// output folder), and what is checked holds wherever the kill lands, so the outcome does
// not depend on timing.
#include <doctest/doctest.h>

#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <fstream>
#include <map>
#include <string>
#include <thread>
#include <vector>

#include <nlohmann/json.hpp>
#include <opencv2/imgcodecs.hpp>

#include "fit/event.hpp"
#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"
#include "tests/support/support.hpp"

namespace {
namespace fs = std::filesystem;
using nlohmann::json;
using occulta::test::slurp;

const char* kScenario = R"({
  "id": "kill-event", "start": "2031-05-02T10:00:00", "cadence_s": 900, "frames": 4,
  "exposure_s": 4.0,
  "image": {"size_px": 64, "half_width_rs": 12, "occulter_rs": [2.5, 11.5]},
  "observers": [{"name": "north", "lon_deg": -50, "lat_deg": 3, "dist_au": 0.98},
                {"name": "south", "lon_deg": 30, "lat_deg": -1, "dist_au": 1.02}],
  "shell": {"lon_deg": -10, "lat_deg": 5, "tilt_deg": 20, "half_angle_deg": 25, "aspect_ratio": 0.3,
            "apex": {"time": "2031-05-02T10:00:00", "height_rs": 3.0, "speed_km_s": 700}},
  "seed": 5
})";

std::vector<std::string> command(std::vector<std::string> args) {
  args.insert(args.begin(), occulta::test::occulta_binary().string());
  return args;
}

// Starts a command with its output discarded.
pid_t spawn(const std::vector<std::string>& args) {
  // What this process has buffered would otherwise be written again by the child.
  std::fflush(stdout);
  std::fflush(stderr);
  const pid_t child = fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    std::freopen("/dev/null", "w", stdout);
    std::freopen("/dev/null", "w", stderr);
    std::vector<char*> argv;
    for (const std::string& a : args) argv.push_back(const_cast<char*>(a.c_str()));
    argv.push_back(nullptr);
    execv(argv[0], argv.data());
    _exit(127);
  }
  return child;
}

int wait_for(pid_t child) {
  int status = 0;
  REQUIRE(waitpid(child, &status, 0) == child);
  return WIFEXITED(status) ? WEXITSTATUS(status) : -WTERMSIG(status);
}

std::size_t files_under(const fs::path& dir) {
  std::size_t n = 0;
  std::error_code error;
  for (fs::recursive_directory_iterator it(dir, error), end; !error && it != end; it.increment(error))
    if (it->is_regular_file(error)) ++n;
  return n;
}

// Runs the command and kills it with SIGKILL once `files` files exist under `out` (or it
// ends first, bounded by a minute); true when it was killed.
bool run_and_kill(const std::vector<std::string>& args, const fs::path& out, std::size_t files) {
  const pid_t child = spawn(args);
  const auto until = std::chrono::steady_clock::now() + std::chrono::minutes(1);
  while (std::chrono::steady_clock::now() < until) {
    int status = 0;
    if (waitpid(child, &status, WNOHANG) == child) return false;
    if (files_under(out) >= files) {
      kill(child, SIGKILL);
      return wait_for(child) == -SIGKILL;
    }
    std::this_thread::sleep_for(std::chrono::microseconds(200));
  }
  kill(child, SIGKILL);
  wait_for(child);
  FAIL("the run neither ended nor reached " << files << " files within a minute");
  return true;
}

// Every file under its final name is whole: FITS read, PNG decoded to its IEND chunk
// (PNG specification §11.2.5: the last chunk), JSON parsed, CSV ending in a newline.
void check_whole(const fs::path& out) {
  std::error_code error;
  for (fs::recursive_directory_iterator it(out, error), end; !error && it != end; it.increment(error)) {
    if (!it->is_regular_file(error)) continue;
    const fs::path& path = it->path();
    const std::string name = path.filename().string();
    if (occulta::imaging::is_pending_name(name)) continue;  // a temporary, never a final name
    INFO(path.string());
    const std::string bytes = slurp(path);
    REQUIRE(!bytes.empty());
    if (path.extension() == ".fits") {
      CHECK_NOTHROW(occulta::imaging::read_fits(path));
    } else if (path.extension() == ".png") {
      CHECK(bytes.size() > 12);
      CHECK(bytes.substr(bytes.size() - 8, 4) == "IEND");
      CHECK(!cv::imread(path.string(), cv::IMREAD_UNCHANGED).empty());
    } else if (path.extension() == ".json") {
      CHECK(!json::parse(bytes).is_discarded());
    } else if (path.extension() == ".csv") {
      CHECK(bytes.back() == '\n');
    }
  }
}

// What a run wrote, comparable between runs: relative path → content, JSON without the
// provenance block (it holds the run's duration), FITS as header text without DATE and
// CHECKSUM (the time of writing) plus the pixels.
std::map<std::string, std::string> outputs(const fs::path& out) {
  std::map<std::string, std::string> found;
  std::error_code error;
  for (fs::recursive_directory_iterator it(out, error), end; !error && it != end; it.increment(error)) {
    if (!it->is_regular_file(error)) continue;
    const fs::path& path = it->path();
    const std::string key = fs::relative(path, out).generic_string();
    if (path.extension() == ".json") {
      json doc = json::parse(slurp(path));
      if (doc.is_object()) doc.erase("provenance");
      found[key] = doc.dump();
    } else if (path.extension() == ".fits") {
      const auto image = occulta::imaging::read_fits(path);
      std::string text;
      for (const auto& card : image.header.cards)
        if (card.key != "DATE" && card.key != "CHECKSUM" && card.key != "DATASUM")
          text += card.key + "=" + card.text + std::to_string(card.real) + "\n";
      found[key] = text + std::string(reinterpret_cast<const char*>(image.pixels.data),
                                      image.pixels.total() * image.pixels.elemSize());
    } else if (path.extension() == ".csv") {
      // result.csv's last columns are the run's provenance (duration): compared up to them.
      const std::string bytes = slurp(path);
      found[key] = bytes.substr(0, bytes.find("elapsed"));
    } else {
      found[key] = slurp(path);
    }
  }
  return found;
}

void check_same(const std::map<std::string, std::string>& a, const std::map<std::string, std::string>& b) {
  std::vector<std::string> names_a, names_b;
  for (const auto& [k, v] : a) names_a.push_back(k);
  for (const auto& [k, v] : b) names_b.push_back(k);
  REQUIRE(names_a == names_b);
  for (const auto& entry : a) {  // not a structured binding: clang 14 cannot capture one in INFO
    INFO(entry.first);
    CHECK(entry.second == b.at(entry.first));
  }
}

}  // namespace

TEST_CASE("hostile output: synth and measure killed at several points leave only whole files, and a re-run gives the same outputs") {
  const fs::path dir = occulta::test::scratch_dir("hostile_kill");
  const fs::path scenario = dir / "kill.scenario.json";
  std::ofstream(scenario) << kScenario;

  // Uninterrupted references.
  REQUIRE(wait_for(spawn(command({"synth", "--quiet", scenario.string(), "--out", (dir / "synth-ref").string()}))) == 0);
  const auto synth_ref = outputs(dir / "synth-ref");
  REQUIRE(synth_ref.size() == 10);  // 8 frames, event, truth
  const fs::path event = dir / "synth-ref" / "kill-event.event.json";
  const int measured = wait_for(spawn(command({"measure", event.string(), "--out", (dir / "measure-ref").string()})));
  REQUIRE((measured == 0 || measured == 1));  // a result, possibly with problems
  REQUIRE(fs::exists(dir / "measure-ref" / "result.json"));
  const auto measure_ref = outputs(dir / "measure-ref");

  // Kill points: after the 1st, 3rd, 6th and 9th file appears (temporaries count).
  int killed = 0;
  for (const std::size_t at : {1, 3, 6, 9}) {
    CAPTURE(at);
    const fs::path out = dir / ("synth-" + std::to_string(at));
    killed += run_and_kill(command({"synth", "--quiet", scenario.string(), "--out", out.string()}), out, at);
    check_whole(out);
    // The event file is written last: when it is there, every frame it names is.
    if (fs::exists(out / "kill-event.event.json")) {
      const occulta::fit::Event e = occulta::fit::read_event(out / "kill-event.event.json");
      for (const auto& view : e.views) CHECK(view.files.size() == 4);
    }
    REQUIRE(wait_for(spawn(command({"synth", "--quiet", scenario.string(), "--out", out.string()}))) == 0);
    check_same(outputs(out), synth_ref);
  }
  for (const std::size_t at : {1, 3, 5}) {
    CAPTURE(at);
    const fs::path out = dir / ("measure-" + std::to_string(at));
    killed += run_and_kill(command({"measure", event.string(), "--out", out.string()}), out, at);
    check_whole(out);
    CHECK(wait_for(spawn(command({"measure", event.string(), "--out", out.string()}))) == measured);
    check_same(outputs(out), measure_ref);
  }
  MESSAGE(killed << " of 7 runs were killed before they ended");
  CHECK(killed >= 1);  // the first file of a run appears long before its end
}

TEST_CASE("hostile output: synth with fewer frames into a used folder leaves only its own frames") {
  const fs::path dir = occulta::test::scratch_dir("hostile_synth_rerun");
  const fs::path scenario = dir / "kill.scenario.json";
  std::ofstream(scenario) << kScenario;
  REQUIRE(wait_for(spawn(command({"synth", "--quiet", scenario.string(), "--out", (dir / "out").string()}))) == 0);
  // A file that is not synth's, with a frame's name, and a temporary a killed run left.
  occulta::test::spit(dir / "out" / "north" / "north_900.fits", "not a frame of synth");
  occulta::test::spit(dir / "out" / "north" / ".north_001.fits.part-123-4", "left by a killed run");
  std::string fewer = kScenario;
  fewer.replace(fewer.find("\"frames\": 4"), 11, "\"frames\": 3");
  std::ofstream(scenario) << fewer;
  REQUIRE(wait_for(spawn(command({"synth", "--quiet", scenario.string(), "--out", (dir / "out").string()}))) == 0);
  const occulta::fit::Event e = occulta::fit::read_event(dir / "out" / "kill-event.event.json");
  REQUIRE(e.views.size() == 2);
  CHECK(e.views[1].files.size() == 3);  // south: the 4th frame of the earlier run is gone
  CHECK(fs::exists(dir / "out" / "north" / "north_900.fits"));  // not synth's: left alone
  CHECK(!fs::exists(dir / "out" / "north" / ".north_001.fits.part-123-4"));
}

TEST_CASE("hostile output: --out equal to the input folder does not change what the next run reads") {
  const fs::path dir = occulta::test::scratch_dir("hostile_out_is_input");
  const fs::path scenario = dir / "kill.scenario.json";
  std::ofstream(scenario) << kScenario;
  const fs::path frames = dir / "frames";
  REQUIRE(wait_for(spawn(command({"synth", "--quiet", scenario.string(), "--out", frames.string()}))) == 0);
  const fs::path event = frames / "kill-event.event.json";
  const auto before = occulta::fit::read_event(event);

  // maps would write <view>/polar.fits, which the glob "<view>/*.fits" reads: refused
  // before any work, with one sentence, and nothing written.
  const auto run = occulta::test::run_command(occulta::test::shell_quote(occulta::test::occulta_binary().string()) +
                                              " maps " + occulta::test::shell_quote(event.string()) + " --out " +
                                              occulta::test::shell_quote(frames.string()));
  INFO(run.output);
  CHECK(run.exit_code == 1);
  CHECK(run.output.find("polar.fits") != std::string::npos);
  CHECK(!fs::exists(frames / "north" / "polar.fits"));
  // measure writes no frames: into the input folder it may, and the next run reads the same.
  REQUIRE(wait_for(spawn(command({"measure", event.string(), "--out", frames.string()}))) <= 1);
  const auto after = occulta::fit::read_event(event);
  REQUIRE(after.views.size() == before.views.size());
  for (std::size_t v = 0; v < after.views.size(); ++v) CHECK(after.views[v].files == before.views[v].files);
}
