#include "app/maps.hpp"

#include <cmath>
#include <cstdint>
#include <cstdio>
#include <exception>
#include <functional>
#include <future>
#include <mutex>
#include <optional>
#include <ostream>

#include "fit/event.hpp"
#include "app/output_set.hpp"
#include "app/quicklook.hpp"
#include "imaging/chain.hpp"
#include "imaging/fits.hpp"
#include "imaging/frame_memory.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

namespace {

// The PA where the sequence brightens most: per PA column, the sum over frames and
// heights of the positive running differences above 3σ (outward-moving material leaves
// a bright leading edge in each running difference — common practice), smoothed over
// ±5°. A first look only; imaging/front finds the CME properly. Summed frame by frame as
// the frames come (add_change), so the frames need not be kept.
void add_change(const cv::Mat& f, std::vector<double>& score) {
  score.resize(std::size_t(f.cols), 0.0);
  for (int y = 0; y < f.rows; ++y) {
    const float* row = f.ptr<float>(y);
    for (int x = 0; x < f.cols; ++x)
      if (row[x] > 3.0f) score[std::size_t(x)] += row[x];
  }
}

double strongest_change_pa(const std::vector<double>& score, const imaging::PolarGrid& polar) {
  const int n = polar.pa_count;
  const int half = std::max(1, int(std::lround(5.0 / polar.pa_step_deg)));
  int best = 0;
  double best_score = -1.0;
  for (int x = 0; x < n; ++x) {
    double sum = 0.0;
    for (int k = -half; k <= half; ++k) sum += score[std::size_t((x + k + n) % n)];
    if (sum > best_score) best_score = sum, best = x;
  }
  return polar.pa_deg(best);
}

imaging::Header cube_header(const imaging::PolarGrid& g, const std::string& view, const std::string& event_id) {
  imaging::Header h;
  // Linear world axes (WCS Paper I): world = CRVAL + CDELT (pixel − CRPIX), 1-based pixels.
  h.set_text("CTYPE1", "PA", "position angle, CCW from solar north via east");
  h.set_text("CUNIT1", "deg");
  h.set_real("CRPIX1", 1.0);
  h.set_real("CRVAL1", g.pa_deg(0));
  h.set_real("CDELT1", g.pa_step_deg);
  h.set_text("CTYPE2", "HEIGHT", "plane-of-sky distance from Sun centre");
  h.set_text("CUNIT2", "solRad", "R_sun = 695700 km (IAU 2015 B3)");
  h.set_real("CRPIX2", 1.0);
  h.set_real("CRVAL2", g.height_rs(0));
  h.set_real("CDELT2", g.height_step_rs);
  h.set_text("CTYPE3", "FRAME", "index into the FRAMES table");
  h.set_real("CRPIX3", 1.0);
  h.set_real("CRVAL3", 0.0);
  h.set_real("CDELT3", 1.0);
  h.set_text("BUNIT", "sigma", "running difference / noise at that height");
  h.set_text("OBJECT", event_id, "event id");
  h.set_text("VIEW", view, "view name in the event file");
  h.add_commentary("COMMENT", "Noise-normalised running differences on a (PA, height) grid, written by occulta maps.");
  return h;
}

std::string pa_label(double pa) {
  char text[16];
  std::snprintf(text, sizeof text, "%03d", int(std::lround(pa)) % 360);
  return text;
}

// One view: the chain, the cube and the pictures. Returns a one-line summary.
// `before_writing` runs before the view's first output is made.
std::string map_view(const fit::Event& event, const fit::EventView& view, const MapsOptions& o, const fs::path& dir,
                     std::vector<std::string>& problems, const std::function<void()>& before_writing) {
  imaging::ChainOptions chain = fit::chain_options(event, view, o.median);
  chain.pa_step_deg = o.pa_step_deg;
  chain.height_step_rs = o.height_step_rs;
  chain.cartesian = imaging::ChainOptions::Cartesian::Last;  // the quicklooks below need the last frames only

  // Memory stays flat in frames: each running difference goes to the cube's file as it
  // comes; kept are its time, the change score per PA and the latest difference. The
  // time–height maps read the planes back from the file (the PA is known at the end only).
  std::optional<imaging::FitsCubeWriter> cube;
  std::vector<double> utc_s, score;
  cv::Mat last_polar;
  const long max_planes = std::max<long>(1, long(view.files.size()) - 1);  // n frames, at most n − 1 differences
  const imaging::ViewRun run = imaging::run_view(view.name, view.files, chain, [&](const imaging::ChainFrame& f) {
    if (!cube) {
      before_writing();
      fs::create_directories(dir);
      cube.emplace(dir / "polar.fits", f.polar_running.size(), max_planes, cube_header(f.polar, view.name, event.id));
    }
    cube->add(f.polar_running);
    utc_s.push_back(f.frame.utc_s);
    add_change(f.polar_running, score);
    f.polar_running.copyTo(last_polar);
  });
  for (const auto& p : run.problems) problems.push_back("view " + view.name + ": " + p);

  const std::string when = " · " + imaging::iso_from_utc_seconds(utc_s.back(), 3).substr(0, 16).replace(10, 1, " ") +
                           " UTC";
  const std::string difference = "running difference (σ)";
  const double strongest_pa = strongest_change_pa(score, run.polar);
  std::vector<double> pas = o.pa_deg;
  if (pas.empty()) pas.push_back(strongest_pa);
  std::vector<imaging::TimeMap> time_maps;  // one per PA, filled below, before its picture starts
  const double t0 = utc_s.front(), t1 = utc_s.back();
  const int columns = std::max<int>(360, int(utc_s.size()) * 16);  // real time across, gaps kept
  // The pictures are drawn beside each other and beside the cube's completion: the
  // stream's end leaves one core idle otherwise. Each writes its own file, and
  // viewer::draw_headless keeps Dear ImGui to one thread at a time (viewer/headless.hpp),
  // so the files are the same bytes as drawn one after another. Declared after what the
  // tasks read, so that they are waited for (a future of std::async waits when
  // destroyed) before any of it goes, also when one of them throws.
  std::vector<std::future<void>> pictures;
  const auto draw = [&pictures](std::function<void()> task) {
    pictures.push_back(std::async(std::launch::async, std::move(task)));
  };
  draw([&] {
    const cv::Mat last_difference = imaging::sigma_difference(run.last_registered, run.last_previous_registered);
    QuicklookPanel sky{Plane::sky, last_difference, viewer::sky_extent(run.grid), sigma_scale(4.0, difference),
                       view.name + " · running difference, north up" + when, run.radii, {}};
    write_quicklook(dir / "running_difference.png", {&sky, 1});
  });
  draw([&] {
    QuicklookPanel unwrapped{Plane::polar, last_polar, viewer::polar_extent(run.polar), sigma_scale(4.0, difference),
                             view.name + " · running difference, unwrapped" + when, {}, {}};
    write_quicklook(dir / "polar_running_difference.png", {&unwrapped, 1});
  });
  if (o.nrgf)
    draw([&] {
      const imaging::PolarMaps maps = imaging::make_polar_maps(run.grid, run.polar);
      cv::Mat polar_frame;
      imaging::to_polar(run.last_registered, maps, polar_frame);
      QuicklookPanel filtered{Plane::polar, imaging::nrgf(polar_frame), viewer::polar_extent(run.polar),
                              sigma_scale(3.0, "NRGF (σ)"),
                              view.name + " · NRGF (Morgan et al. 2006), unwrapped" + when, {}, {}};
      write_quicklook(dir / "nrgf.png", {&filtered, 1});
    });

  // The cube is finished (its table written, the file flushed to the disk and renamed:
  // the fsync waits for the disk) on a thread of its own, beside the time–height maps,
  // which read its planes back through a descriptor of their own (freeze_planes); after
  // them when the planes cannot be frozen.
  std::vector<std::string> iso;
  for (const double t : utc_s) iso.push_back(imaging::iso_from_utc_seconds(t, 3));
  const auto finish = [&] { cube->finish("FRAMES", {{"TIME", "", {}, iso}, {"UTC_S", "s", utc_s, {}}}); };
  const bool frozen = cube->freeze_planes();
  std::future<void> finishing = std::async(frozen ? std::launch::async : std::launch::deferred, finish);
  std::mutex plane_mutex;  // not frozen, plane() goes through cfitsio: one thread at a time
  const auto plane = [&](std::size_t k) {
    if (frozen) return cube->plane(long(k));
    const std::lock_guard lock(plane_mutex);
    return cube->plane(long(k));
  };
  for (double pa : pas) time_maps.push_back(imaging::time_height(run.polar, utc_s, plane, pa, 2.0));
  for (std::size_t i = 0; i < pas.size(); ++i)
    draw([&, i] {
      const imaging::TimeMap& th = time_maps[i];
      char title[160];
      std::snprintf(title, sizeof title, "%s · time–height along PA %.0f° (median over ±2°) · running difference",
                    view.name.c_str(), pas[i]);
      QuicklookPanel map{Plane::time_height, imaging::render_on_time_axis(th, t0, t1, columns),
                         viewer::time_map_extent(th, t0, t1), sigma_scale(4.0, difference), title, {}, {}};
      write_quicklook(dir / ("time_height_pa" + pa_label(pas[i]) + ".png"), {&map, 1});
    });

  // The cube and every picture waited for, the first failure thrown after.
  std::exception_ptr failure;
  pictures.push_back(std::move(finishing));
  for (std::future<void>& picture : pictures) try {
      picture.get();
    } catch (...) {
      if (!failure) failure = std::current_exception();
    }
  if (failure) std::rethrow_exception(failure);

  char line[200];
  std::snprintf(line, sizeof line, "%-8s %3d frames  %3zu differences  heights %.2f-%.2f R☉  strongest change at PA %.0f",
                view.name.c_str(), run.frames_used, utc_s.size(), run.polar.height_rs(0),
                run.polar.height_rs(run.polar.height_count - 1), strongest_pa);
  return line;
}

}  // namespace

int maps(const MapsOptions& o, std::ostream& out, std::ostream& err) {
  imaging::set_frame_memory();
  if (fs::is_directory(o.event))
    throw imaging::InputError(o.event, "is a folder; `maps` needs an event file (*.event.json) naming the views' frames");
  const fit::Event event = fit::read_event(o.event);
  // What a run writes per view: checked against the event's globs before any work, and
  // the previous run's set removed (app/output_set.hpp).
  const OutputNames names{"", {}, {"polar.fits", "running_difference.png", "polar_running_difference.png",
                                   "time_height_pa*.png", "nrgf.png"}};
  std::vector<fs::path> outputs;
  std::vector<std::string> view_names;
  for (const fit::EventView& view : event.views) {
    view_names.push_back(view.name);
    for (const char* name : {"polar.fits", "running_difference.png", "polar_running_difference.png", "nrgf.png"})
      outputs.push_back(fs::path(o.out_dir) / view.name / name);
    for (const double pa : o.pa_deg) outputs.push_back(fs::path(o.out_dir) / view.name / ("time_height_pa" + pa_label(pa) + ".png"));
  }
  check_outputs_outside_inputs(event, outputs, o.out_dir);  // an unusable --out: exit 1, as out_dir.hpp
  // The previous run's outputs go on a thread of their own, beside the start of the first
  // view's chain (its headers, occulter radii, polar sampling and first reads): removing
  // a previous polar.fits of 35 MB took 16-37 ms on this machine's file system, all of it
  // before any work. Waited for (retired()) before any view makes its first output, as
  // output_set.hpp asks (its sweep of temporaries must not meet this run's); and at the
  // end, so that it is done whatever happened to the views.
  std::future<void> retiring = std::async(std::launch::async, [&o, &names, &view_names] {
    retire_previous_outputs(o.out_dir, names, view_names);
  });
  const auto retired = [&retiring] {
    if (retiring.valid()) retiring.get();
  };
  std::vector<std::string> problems;
  int mapped = 0;
  for (const fit::EventView& listed : event.views) {
    if (listed.files.empty()) {
      problems.push_back("view " + listed.name + ": no files match " + listed.globs.front() + ".");
      continue;
    }
    const fit::WindowSplit split = fit::apply_window(event, listed);
    if (split.inside.empty()) {
      problems.push_back("view " + listed.name + ": none of its " + std::to_string(split.outside.size()) +
                         " frames lies in the event's window.");
      continue;
    }
    fit::EventView view = listed;
    view.files = split.inside;
    if (!split.outside.empty())
      out << view.name << ": " << split.outside.size() << " frames outside the event's window are not used\n";
    try {
      out << map_view(event, view, o, fs::path(o.out_dir) / view.name, problems, retired) << '\n';
      ++mapped;
    } catch (const imaging::InputError& e) {
      problems.push_back("view " + view.name + ": " + e.what());
    }
  }
  retired();
  out << "maps written under " << o.out_dir << "/<view>/\n";
  for (const auto& p : problems) err << "occulta: problem: " << p << '\n';
  return problems.empty() && mapped > 0 ? 0 : 1;
}

}  // namespace occulta::app
