// app/view.cpp — see view.hpp.
#include "app/view.hpp"

#include <filesystem>
#include <ostream>
#include <sstream>

#include "app/measure.hpp"
#include "fit/event.hpp"
#include "imaging/input_error.hpp"
#include "viewer/present.hpp"
#include "viewer/script.hpp"
#include "viewer/session.hpp"
#include "viewer/ui.hpp"

namespace occulta::app {
namespace fs = std::filesystem;

namespace {

// "1280x800" → {1280, 800}, within the window sizes the viewer accepts.
std::pair<int, int> parse_size(const std::string& text) {
  int w = 0, h = 0;
  char x = 0, extra = 0;
  if (std::sscanf(text.c_str(), "%d%c%d%c", &w, &x, &h, &extra) != 3 || (x != 'x' && x != 'X') ||
      w < viewer::kMinWindowPx || h < viewer::kMinWindowPx || w > viewer::kMaxWindowPx || h > viewer::kMaxWindowPx)
    throw imaging::InputError("--size", "must be WIDTHxHEIGHT in pixels, each from " + std::to_string(viewer::kMinWindowPx) +
                                            " to " + std::to_string(viewer::kMaxWindowPx) + " (e.g. 1280x800)");
  return {w, h};
}

}  // namespace

int view(const ViewOptions& options, std::ostream& out, std::ostream& err) {
  const auto [width, height] = parse_size(options.size);
  // Read everything that can be wrong before any work: the script, then the event.
  const std::vector<viewer::Action> script =
      options.script.empty() ? std::vector<viewer::Action>{} : viewer::read_script(options.script);
  // The event as `measure` reads it: the fit and the export are its measurement.
  viewer::Session session;
  session.input = fit::load_measurement_input(options.input);
  session.options.median = options.median;
  session.export_result = [&options](const fs::path& track, const fs::path& dir) {
    MeasureOptions measure;
    measure.input = options.input;
    measure.out_dir = dir.string();
    measure.track = track.string();
    measure.measurement.median = options.median;
    measure.quiet = true;
    std::ostringstream ignored;  // the result's problems are in result.json and on screen
    (void)run_measure(measure, ignored);
  };
  const fit::Event& event = session.input->event;

  std::vector<viewer::ViewSource> sources;
  viewer::WindowState state;
  state.width = width;
  state.height = height;
  state.event_id = event.id;
  for (std::size_t i = 0; i < event.views.size(); ++i) {
    const fit::EventView& v = event.views[i];
    // The frames `measure` images, those inside the event's window (fit::apply_window), so
    // that the window's fit reuses its loader's imaging; a view with none inside shows them
    // all (its fit reruns the chain, and names the view among the problems).
    const std::vector<fs::path>& inside = session.input->windows.at(i).inside;
    sources.push_back({v.name, inside.empty() ? v.files : inside, fit::chain_options(event, v, options.median)});
    state.views.push_back(v.name);
  }

  if (options.snapshot.empty()) return viewer::present(std::move(state), std::move(sources), script, session, err);

  std::vector<viewer::ViewPictures> views;
  int status = 0;  // 1: drawn, but a view could not be loaded (the picture says which)
  for (const viewer::ViewSource& source : sources) {
    views.push_back(viewer::load_view(source));
    if (!views.back().error.empty()) err << "occulta view: " << views.back().error << '\n', status = 1;
  }
  viewer::apply(state, viewer::action::Timeline{viewer::frame_times(views)});
  for (const viewer::ViewPictures& v : views) viewer::apply(state, viewer::action::ViewFrames{v.name, viewer::frame_times(v)});
  viewer::run_script(state, views, script, session);
  if (!state.message.empty()) err << "occulta view: " << state.message << '\n';
  viewer::write_png(viewer::draw_window_headless(state, views), options.snapshot);
  out << "wrote " << options.snapshot << " (" << state.width << "×" << state.height << ", "
      << viewer::display_label(state.display) << ", frame " << state.frame + 1 << " of " << state.timeline_utc_s.size()
      << ")\n";
  return status;
}

}  // namespace occulta::app
