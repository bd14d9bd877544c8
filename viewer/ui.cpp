// viewer/ui.cpp — see ui.hpp.
#include "viewer/ui.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <numbers>

#include "fit/measurement.hpp"
#include "imaging/time.hpp"
#include "viewer/cme_list.hpp"
#include "viewer/height_time.hpp"
#include "viewer/shell_overlay.hpp"
#include "viewer/stereo.hpp"

namespace occulta::viewer {
namespace {

constexpr double kDeg = std::numbers::pi / 180.0;

// Colours of our own for the overlays.
constexpr ImU32 kOcculter = IM_COL32(255, 196, 64, 230);   // occulter edge and field stop
constexpr ImU32 kLimb = IM_COL32(255, 255, 255, 150);      // 1 R☉
constexpr ImU32 kCursor = IM_COL32(80, 255, 120, 255);
constexpr ImU32 kProblem = IM_COL32(255, 120, 100, 255);
// Marked points: the analyst's amber discs, the automatic ones sky-blue squares; strong on
// the frame they were marked on, faint on the others; the selected one ringed in white.
constexpr ImU32 kAnalyst = IM_COL32(255, 200, 40, 255), kAnalystFaint = IM_COL32(255, 200, 40, 90);
constexpr ImU32 kAutomatic = IM_COL32(110, 200, 255, 255), kAutomaticFaint = IM_COL32(110, 200, 255, 90);
constexpr ImU32 kPointEdge = IM_COL32(0, 0, 0, 200);
constexpr ImU32 kSelected = IM_COL32(255, 255, 255, 255);
constexpr ImU32 kShell = IM_COL32(70, 235, 200, 255);  // the shell's outline
// The measurement's automatic tracks: the shown CME's hollow sky-blue squares, the other
// CMEs' hollow grey ones, each labelled with its number on the frame it was found on.
constexpr ImU32 kOtherCme = IM_COL32(200, 200, 200, 150);
constexpr ImU32 kTie = IM_COL32(255, 110, 220, 255);    // tie points and epipolar lines
constexpr double kEpipolarReachRs = 40.0;               // drawn out to this far from Sun centre
// A click within this many pixels of a point of the shown frame takes that point.
constexpr float kPickPx = 8.0f;
// A point is on a frame when their times agree to within this (frames are seconds apart).
constexpr double kSameFrameS = 0.5;

// The colour bar's label: short, so that it fits beside the title on a small panel; the
// toolbar says which display the σ are of.
std::string scale_label(Display display) { return display == Display::calibrated ? "log I (σ)" : "σ"; }

std::string clock(double utc_s) {
  std::string iso = imaging::iso_from_utc_seconds(utc_s, 0);
  std::replace(iso.begin(), iso.end(), 'T', ' ');
  return iso + " UTC";
}

// Characters typed this frame (the keys of ui.hpp), unless a text field has them.
bool typed(char c) {
  const ImGuiIO& io = ImGui::GetIO();
  if (io.WantTextInput) return false;
  for (int i = 0; i < io.InputQueueCharacters.Size; ++i)
    if (io.InputQueueCharacters[i] == ImWchar(c)) return true;
  return false;
}

void keys(const WindowState& state, std::span<const Key> pressed, std::vector<Action>& out) {
  for (Key key : pressed) switch (key) {
      case Key::right: out.push_back(action::Step{1}); break;
      case Key::left: out.push_back(action::Step{-1}); break;
      case Key::home: out.push_back(action::Frame{0}); break;
      case Key::end: out.push_back(action::Frame{int(state.timeline_utc_s.size()) - 1}); break;
      case Key::erase:
        if (state.selected >= 0) out.push_back(action::DeletePoint{state.selected});
        break;
    }
  if (typed('u')) out.push_back(action::Undo{});
  if (typed('r')) out.push_back(action::Redo{});
  if (typed('x') && state.selected >= 0) out.push_back(action::DeletePoint{state.selected});
  if (typed(' ')) out.push_back(state.playing ? Action{action::Pause{}} : Action{action::Play{}});
  for (std::size_t i = 0; i < displays().size(); ++i)
    if (typed(char('1' + i))) out.push_back(action::ShowDisplay{displays()[i]});
  if (typed('c')) {
    const auto tables = colour_tables();
    const auto at = std::find(tables.begin(), tables.end(), state.colours) - tables.begin();
    out.push_back(action::Colours{tables[std::size_t(at + 1) % tables.size()]});
  }
  if (typed('v') && !state.views.empty()) {  // all → the first view → … → the last → all
    const auto at = std::find(state.views.begin(), state.views.end(), state.focus);
    std::string next = state.views.front();
    if (!state.focus.empty()) next = (at == state.views.end() || at + 1 == state.views.end()) ? std::string() : *(at + 1);
    out.push_back(action::Focus{next});
  }
  // Narrow / widen by a quarter, about the middle of the range.
  const double mid = 0.5 * (state.sigma_lo + state.sigma_hi), half = 0.5 * (state.sigma_hi - state.sigma_lo);
  if (typed('[')) out.push_back(action::Contrast{mid - half / 1.25, mid + half / 1.25});
  if (typed(']')) out.push_back(action::Contrast{mid - half * 1.25, mid + half * 1.25});
  if (typed('t')) out.push_back(action::TieMode{!state.tying});
  if (typed('f') && state.fit_request.empty()) out.push_back(action::Fit{});
  if (typed('s')) out.push_back(action::SaveTrack{state.track_path.empty() ? state.event_id + ".track.json" : state.track_path});
  if (typed('e')) out.push_back(action::Export{state.event_id + ".result"});
  if (typed('h')) out.push_back(action::Help{!state.help});
  if (typed('q')) out.push_back(action::Quit{});
}

// Continues the line when `width` more pixels fit on it, else starts a new one.
void same_line_if_fits(float width) {
  const float right = ImGui::GetWindowPos().x + ImGui::GetWindowContentRegionMax().x;
  ImGui::SameLine(0, 24);
  if (ImGui::GetCursorScreenPos().x + width > right) ImGui::NewLine();
}

void toolbar(const WindowState& state, const std::vector<ViewPictures>& views, std::vector<Action>& out) {
  ImGui::TextUnformatted("Show");
  for (Display d : displays()) {
    ImGui::SameLine();
    if (ImGui::RadioButton(std::string(display_label(d)).c_str(), state.display == d)) out.push_back(action::ShowDisplay{d});
  }
  same_line_if_fits(280);
  float range[2] = {float(state.sigma_lo), float(state.sigma_hi)};
  ImGui::SetNextItemWidth(170);
  if (ImGui::DragFloatRange2("contrast (σ)", &range[0], &range[1], 0.05f, -100.0f, 100.0f, "%.1f", "%.1f"))
    out.push_back(action::Contrast{range[0], range[1]});
  same_line_if_fits(180);
  ImGui::SetNextItemWidth(110);
  if (ImGui::BeginCombo("colours", std::string(colour_table_name(state.colours)).c_str())) {
    for (ColourTable t : colour_tables())
      if (ImGui::Selectable(std::string(colour_table_name(t)).c_str(), t == state.colours)) out.push_back(action::Colours{t});
    ImGui::EndCombo();
  }
  if (views.size() > 1) {
    float names = 0;
    for (const ViewPictures& v : views) names += ImGui::CalcTextSize(v.name.c_str()).x + 40;
    same_line_if_fits(names + 80);
    ImGui::TextUnformatted("View");
    ImGui::SameLine();
    if (ImGui::RadioButton("all", state.focus.empty())) out.push_back(action::Focus{""});
    for (const ViewPictures& v : views) {
      ImGui::SameLine();
      if (ImGui::RadioButton(v.name.c_str(), state.focus == v.name)) out.push_back(action::Focus{v.name});
    }
  }
}

// A short bar of a whole number of R☉ at the bottom right of a sky panel, labelled.
void radius_scale(ImDrawList& draw, const PlotFrame& frame) {
  const double width_rs = std::abs(frame.x.hi - frame.x.lo);
  const double bar_rs = width_rs > 20 ? 5.0 : (width_rs > 6 ? 2.0 : 1.0);
  const ImVec2 right(frame.pixel_max.x - 10, frame.pixel_max.y - 12);
  const float px = float(bar_rs / width_rs * (frame.pixel_max.x - frame.pixel_min.x));
  draw.AddRectFilled(ImVec2(right.x - px, right.y - 2), ImVec2(right.x, right.y + 1), IM_COL32_WHITE);
  char label[32];
  std::snprintf(label, sizeof label, "%g R☉", bar_rs);
  const ImVec2 size = ImGui::CalcTextSize(label);
  draw.AddText(ImVec2(right.x - 0.5f * px - 0.5f * size.x, right.y - 4 - size.y), IM_COL32_WHITE, label);
}

// The controls' shell as this frame's observer sees it at the frame's time (shown_views).
void draw_shell(ImDrawList& draw, const PlotFrame& frame, bool polar, const OutlineRuns& outline) {
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  std::vector<ImVec2> line;
  for (const std::vector<OutlinePoint>& run : outline) {
    line.clear();
    for (const OutlinePoint& o : run) {
      if (polar) {
        const double pa = std::fmod(o.pa_deg, 360.0);
        if (!line.empty() && pa < 1.0) {  // the polar panel ends at 360°: start again at 0°
          draw.AddPolyline(line.data(), int(line.size()), kShell, ImDrawFlags_None, 1.5f);
          line.clear();
        }
        line.push_back(frame.to_pixel(pa, o.height_rs));
      } else {
        const MarkedPoint p{"", 0.0, o.pa_deg, o.height_rs};
        line.push_back(frame.to_pixel(sky_x_rs(p), sky_y_rs(p)));
      }
    }
    if (line.size() > 1) draw.AddPolyline(line.data(), int(line.size()), kShell, ImDrawFlags_None, 1.5f);
  }
  draw.PopClipRect();
}

// The view's points on its panel (strong at the frame's time, faint at others); the index of
// the point of this frame under the mouse (within kPickPx), or −1.
int draw_points(ImDrawList& draw, const PlotFrame& frame, const WindowState& state, const std::string& view, double utc_s) {
  const bool polar = state.display == Display::polar;
  const ImVec2 mouse = ImGui::GetIO().MousePos;
  int picked = -1;
  float picked_d2 = kPickPx * kPickPx;
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  for (int pass = 0; pass < 2; ++pass)  // the faint ones first, under the strong ones
    for (std::size_t i = 0; i < state.points.size(); ++i) {
      const MarkedPoint& p = state.points[i];
      const bool here = std::abs(p.utc_s - utc_s) < kSameFrameS;
      if (p.view != view || here != (pass == 1)) continue;
      const ImVec2 at = polar ? frame.to_pixel(p.pa_deg, p.height_rs) : frame.to_pixel(sky_x_rs(p), sky_y_rs(p));
      const ImU32 colour = p.automatic ? (here ? kAutomatic : kAutomaticFaint) : (here ? kAnalyst : kAnalystFaint);
      const float r = here ? 4.0f : 3.0f;
      if (p.automatic) {
        draw.AddRectFilled(ImVec2(at.x - r, at.y - r), ImVec2(at.x + r, at.y + r), colour);
        if (here) draw.AddRect(ImVec2(at.x - r, at.y - r), ImVec2(at.x + r, at.y + r), kPointEdge);
      } else {
        draw.AddCircleFilled(at, r, colour, 12);
        if (here) draw.AddCircle(at, r, kPointEdge, 12);
      }
      if (int(i) == state.selected) draw.AddCircle(at, r + 4.0f, kSelected, 16, 1.5f);
      const float dx = at.x - mouse.x, dy = at.y - mouse.y;
      if (here && dx * dx + dy * dy <= picked_d2) picked = int(i), picked_d2 = dx * dx + dy * dy;
    }
  draw.PopClipRect();
  return picked;
}

// A front's leading edge on this frame (imaging/front.hpp Front::leading_edge_rs, per PA
// column of the measurement's polar grid), as runs of neighbouring columns.
void draw_leading_edge(ImDrawList& draw, const PlotFrame& frame, bool polar, const fit::ViewMeasurement& v, double utc_s,
                       ImU32 colour, float thickness) {
  const imaging::PolarSequence& seq = v.polar;
  for (std::size_t k = 0; k < seq.utc_s.size() && k < v.front.leading_edge_rs.size(); ++k) {
    if (std::abs(seq.utc_s[k] - utc_s) >= kSameFrameS) continue;
    const std::vector<float>& edge = v.front.leading_edge_rs[k];
    std::vector<ImVec2> run;
    const auto flush = [&] {
      if (run.size() > 1) draw.AddPolyline(run.data(), int(run.size()), colour, ImDrawFlags_None, thickness);
      run.clear();
    };
    for (std::size_t c = 0; c < edge.size(); ++c) {
      if (!std::isfinite(edge[c])) {
        flush();
        continue;
      }
      const MarkedPoint p{v.name, utc_s, seq.polar.pa_deg(int(c)), double(edge[c])};
      run.push_back(polar ? frame.to_pixel(p.pa_deg, p.height_rs) : frame.to_pixel(sky_x_rs(p), sky_y_rs(p)));
    }
    flush();
  }
}

// The measurement's CMEs in this view: each front's leading edge on this frame and its
// automatic track (the analyst's points are drawn as points) — the shown CME's strong, the
// others faint — each labelled "CME k" at its point on this frame.
void draw_cme_tracks(ImDrawList& draw, const PlotFrame& frame, bool polar, const WindowState& state, const std::string& view,
                     double utc_s) {
  if (!state.measured) return;
  const fit::CmeMeasurement* shown = shown_cme(state);
  const bool several = state.measured->cmes.size() > 1;
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  for (const fit::CmeMeasurement& cme : state.measured->cmes)
    for (const fit::ViewMeasurement& v : cme.views) {
      if (v.name != view) continue;
      const bool strong = &cme == shown;
      if (v.front.found) draw_leading_edge(draw, frame, polar, v, utc_s, strong ? kAutomatic : kOtherCme, 1.0f);
      if (v.by_analyst) continue;
      for (const fit::TrackPoint& p : v.points) {
        const bool here = std::abs(p.utc_s - utc_s) < kSameFrameS;
        const MarkedPoint m{view, p.utc_s, p.pa_deg, p.height_rs};
        const ImVec2 at = polar ? frame.to_pixel(p.pa_deg, p.height_rs) : frame.to_pixel(sky_x_rs(m), sky_y_rs(m));
        const float r = here ? 5.0f : 3.0f;
        const ImU32 colour = strong ? (here ? kAutomatic : kAutomaticFaint) : kOtherCme;
        if (!here && !strong) continue;  // the other CMEs on their own frame only
        draw.AddRect(ImVec2(at.x - r, at.y - r), ImVec2(at.x + r, at.y + r), colour, 0.0f, 0, here ? 1.5f : 1.0f);
        if (here && several) draw.AddText(ImVec2(at.x + r + 2, at.y - r - 2), colour, ("CME " + std::to_string(cme.index)).c_str());
      }
    }
  draw.PopClipRect();
}

// A height–time law over the panel's times with its ±1σ band (height_sigma_rs).
void draw_law(ImDrawList& draw, const PlotFrame& frame, const ImageExtent& e, const fit::HeightTimeFit& fit, ImU32 colour,
              ImU32 band) {
  std::vector<DataPoint> law, above, below;
  for (int i = 0; i <= 60; ++i) {
    const double t = e.left + (e.right - e.left) * i / 60.0, h = fit.law.height_at(t), s = height_sigma_rs(fit, t);
    law.push_back({t, h});
    above.push_back({t, h + s});
    below.push_back({t, h - s});
  }
  draw_line(draw, frame, above, band, 1.0f);
  draw_line(draw, frame, below, band, 1.0f);
  draw_line(draw, frame, law, colour, 1.5f);
}

// One view's panel in [lo, hi]; the cursor's action when it is over the image. Whether
// the mouse is over the image.
// The view's height–time panel: the map along its PA, the displayed time, the kinematic fit
// of the view's points with its ±σ band, and the points.
void height_time_panel(const WindowState& state, const ShownView& shown, ImVec2 lo, ImVec2 hi) {
  ImDrawList& draw = *ImGui::GetWindowDrawList();
  if (shown.frame < 0) return;
  if (!std::isfinite(shown.time_height_pa_deg)) {
    draw.AddText(ImGui::GetFont(), ImGui::GetFontSize(), ImVec2(lo.x + 8, lo.y + 8), IM_COL32(150, 150, 150, 255),
                 (shown.view->name + ": mark points (or right-click a frame) for the height–time panel").c_str(), nullptr,
                 hi.x - lo.x - 16);
    return;
  }
  const ImageExtent& e = shown.time_height.extent;
  PanelAxes axes;
  char title[96];
  std::snprintf(title, sizeof title, "%s · height–time at PA %.0f°", shown.view->name.c_str(), shown.time_height_pa_deg);
  axes.title = title;
  axes.x = Axis{e.left, e.right, "time (UTC)", true};
  axes.y = Axis{e.bottom, e.top, "height (R☉)"};
  const PlotFrame frame = draw_image_panel(draw, lo, hi, shown.time_height, axes);
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  const double now = shown.view->frames[std::size_t(shown.frame)].utc_s;
  draw.AddLine(frame.to_pixel(now, e.bottom), frame.to_pixel(now, e.top), IM_COL32(255, 255, 255, 90), 1.0f);
  if (const auto& fit = shown.height_fit) draw_law(draw, frame, e, *fit, kShell, IM_COL32(70, 235, 200, 140));
  // The shown CME's automatic track in this view and the measurement's fit of it.
  if (const fit::ViewMeasurement* seen = shown_sighting(state, shown.view->name); seen && !seen->by_analyst) {
    if (seen->kinematics_ok()) draw_law(draw, frame, e, *seen->kinematics, kAutomatic, kAutomaticFaint);
    for (const fit::TrackPoint& p : seen->points) {
      const ImVec2 at = frame.to_pixel(p.utc_s, p.height_rs);
      draw.AddRect(ImVec2(at.x - 3, at.y - 3), ImVec2(at.x + 3, at.y + 3), kAutomatic);
    }
  }
  for (const MarkedPoint& p : state.points)
    if (p.view == shown.view->name)
      draw.AddCircleFilled(frame.to_pixel(p.utc_s, p.height_rs), 3.0f, p.automatic ? kAutomatic : kAnalyst, 10);
  draw.PopClipRect();
}

// Where a sky position is drawn on a panel (the polar display: its PA and height).
ImVec2 panel_pixel(const PlotFrame& frame, bool polar, double x_rs, double y_rs) {
  return polar ? frame.to_pixel(pa_deg_at(x_rs, y_rs), std::hypot(x_rs, y_rs)) : frame.to_pixel(x_rs, y_rs);
}

// Tie-pointing on one view: the epipolar line of the first mark (or of the hovered place
// on another view, before a first click), and the ties' marks on this view.
void draw_ties(ImDrawList& draw, const PlotFrame& frame, bool polar, const WindowState& state, const ViewPictures& view,
               const FramePictures& f, const std::vector<ViewPictures>& views) {
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  for (const TiePoint& t : state.ties)
    for (const SkyMark* m : {&t.a, &t.b})
      if (m->view == view.name) {
        const ImVec2 p = panel_pixel(frame, polar, m->x_rs, m->y_rs);
        const float r = std::abs(m->utc_s - f.utc_s) < kSameFrameS ? 5.0f : 3.5f;
        draw.AddQuad(ImVec2(p.x, p.y - r), ImVec2(p.x + r, p.y), ImVec2(p.x, p.y + r), ImVec2(p.x - r, p.y), kTie, 1.5f);
      }
  std::optional<SkyMark> source = state.tie_first;
  if (!source && state.tying && state.hover && state.hover->view != view.name)
    for (const ViewPictures& v : views)
      if (v.name == state.hover->view && !v.frames.empty())
        source = SkyMark{v.name, v.frames[std::size_t(std::max(0, nearest_frame(v, displayed_time(state))))].utc_s,
                         state.hover->x_rs, state.hover->y_rs};
  if (state.tying && source && source->view != view.name)
    if (const auto seen = line_of_sight(*source, views)) {
      std::vector<ImVec2> line;
      for (const Eigen::Vector2d& p : epipolar_line(*seen, view.grid, f.observer, kEpipolarReachRs)) {
        const ImVec2 at = panel_pixel(frame, polar, p.x(), p.y());
        // The polar panel wraps at north: a jump across it starts a new line.
        if (polar && !line.empty() && std::abs(at.x - line.back().x) > 0.5f * (frame.pixel_max.x - frame.pixel_min.x)) {
          draw.AddPolyline(line.data(), int(line.size()), kTie, ImDrawFlags_None, 1.0f);
          line.clear();
        }
        line.push_back(at);
      }
      if (line.size() > 1) draw.AddPolyline(line.data(), int(line.size()), kTie, ImDrawFlags_None, 1.0f);
    }
  if (state.tie_first && state.tie_first->view == view.name) {
    const ImVec2 p = panel_pixel(frame, polar, state.tie_first->x_rs, state.tie_first->y_rs);
    draw.AddCircle(p, 6.0f, kTie, 16, 1.5f);
  }
  draw.PopClipRect();
}

bool view_panel(const WindowState& state, const ShownView& shown, const std::vector<ViewPictures>& views, ImVec2 lo,
                ImVec2 hi, std::vector<Action>& out, std::vector<PanelPlace>* placed) {
  ImDrawList& draw = *ImGui::GetWindowDrawList();
  const ViewPictures& view = *shown.view;
  if (!view.error.empty() || shown.frame < 0) {
    draw.AddText(ImGui::GetFont(), ImGui::GetFontSize(), ImVec2(lo.x + 8, lo.y + 8), view.error.empty() ? IM_COL32_WHITE : kProblem,
                 (view.name + ": " + (view.error.empty() ? "loading…" : view.error)).c_str(), nullptr, hi.x - lo.x - 16);
    return false;
  }
  const FramePictures& f = view.frames[std::size_t(shown.frame)];
  const bool polar = state.display == Display::polar;
  PanelAxes axes;
  axes.title = view.name + " · " + clock(f.utc_s).substr(11, 8);  // the date is on the timeline
  if (polar) {
    axes.x = Axis{0.0, 360.0, "position angle (°, from north through east)"};
    axes.y = Axis{shown.panel.extent.bottom, shown.panel.extent.top, "height (R☉)"};
  } else {
    // West to the right, north up: x and y as the registered grid has them.
    axes.x = Axis{shown.panel.extent.left, shown.panel.extent.right, "x (R☉, west)"};
    axes.y = Axis{shown.panel.extent.bottom, shown.panel.extent.top, "y (R☉, north)"};
    axes.equal_scale = true;
  }
  const PlotFrame frame = draw_image_panel(draw, lo, hi, shown.panel, axes);
  if (placed) placed->push_back(PanelPlace{view.name, state.display, frame});
  if (!polar) {
    draw_circle(draw, frame, 0, 0, 1.0, kLimb, 1.0f);
    draw_circle(draw, frame, 0, 0, view.radii.inner_rs, kOcculter);
    draw_circle(draw, frame, 0, 0, view.radii.outer_rs, kOcculter);
    draw_north_east(draw, frame);
    radius_scale(draw, frame);
  } else {
    const DataPoint inner[2] = {{0, view.radii.inner_rs}, {360, view.radii.inner_rs}};
    const DataPoint outer[2] = {{0, view.radii.outer_rs}, {360, view.radii.outer_rs}};
    draw_line(draw, frame, inner, kOcculter);
    draw_line(draw, frame, outer, kOcculter);
  }
  // The cursor: a mark where the state says it is (on every panel of that view).
  if (state.hover && state.hover->view == view.name) {
    const double x = state.hover->x_rs, y = state.hover->y_rs;
    double px = x, py = y;
    if (polar) {
      px = std::fmod(std::atan2(-x, y) / kDeg + 360.0, 360.0);
      py = std::hypot(x, y);
    }
    const ImVec2 p = frame.to_pixel(px, py);
    draw.AddCircle(p, 6.0f, kCursor, 16, 1.5f);
  }
  if (state.shell.shown) draw_shell(draw, frame, polar, shown.outline);
  if (state.tying || !state.ties.empty()) draw_ties(draw, frame, polar, state, view, f, views);
  draw_cme_tracks(draw, frame, polar, state, view.name, f.utc_s);
  const int picked = draw_points(draw, frame, state, view.name, f.utc_s);
  // The mouse over the image becomes a hover action (the plot's inverse mapping); a click
  // there takes the point under it or marks a new one, a drag moves the selected one —
  // through the same inverse mapping, so a point lands where it was clicked.
  const ImVec2 mouse = ImGui::GetIO().MousePos;
  if (ImGui::IsWindowHovered() && mouse.x >= frame.pixel_min.x && mouse.x < frame.pixel_max.x && mouse.y >= frame.pixel_min.y &&
      mouse.y < frame.pixel_max.y) {
    // Dear ImGui keeps the mouse on whole pixels (it floors the position): the pointer
    // shows the pixel [x, x + 1) × [y, y + 1), whose centre is what the analyst points at.
    const DataPoint sky = sky_at(frame, state.display, ImVec2(mouse.x + 0.5f, mouse.y + 0.5f));
    if (!state.hover || state.hover->view != view.name || state.hover->x_rs != sky.x || state.hover->y_rs != sky.y)
      out.push_back(action::HoverAt{view.name, sky.x, sky.y});
    const double pa = pa_deg_at(sky.x, sky.y), h = std::hypot(sky.x, sky.y);
    if (ImGui::IsMouseClicked(ImGuiMouseButton_Right)) out.push_back(action::HeightTimePa{pa});
    if (state.tying) {
      if (ImGui::IsMouseClicked(ImGuiMouseButton_Left)) {
        const SkyMark here{view.name, f.utc_s, sky.x, sky.y};
        if (state.tie_first && state.tie_first->view != view.name) {
          if (const auto tie = tie_marks(*state.tie_first, here, views)) out.push_back(action::AddTie{*tie});
        } else {
          out.push_back(action::TieFirst{here});
        }
      }
    } else if (ImGui::IsMouseClicked(ImGuiMouseButton_Left)) {
      if (picked >= 0) out.push_back(action::SelectPoint{picked});
      else out.push_back(action::AddPoint{view.name, f.utc_s, pa, h});
    } else if (ImGui::IsMouseDragging(ImGuiMouseButton_Left, 2.0f) && state.selected >= 0 &&
               state.points[std::size_t(state.selected)].view == view.name &&
               std::abs(state.points[std::size_t(state.selected)].utc_s - f.utc_s) < kSameFrameS) {
      out.push_back(action::MovePoint{state.selected, pa, h, true});
    }
    return true;
  }
  return false;
}

// The selected point, or how many there are.
void point_readout(const WindowState& state) {
  if (state.points.empty()) return;
  ImGui::SameLine(0, 24);
  if (state.selected < 0) {
    ImGui::TextDisabled("%zu point(s)", state.points.size());
    return;
  }
  const MarkedPoint& p = state.points[std::size_t(state.selected)];
  ImGui::TextColored(ImGui::ColorConvertU32ToFloat4(p.automatic ? kAutomatic : kAnalyst),
                     "point %d of %zu: %s %s   PA %.1f°   height %.2f R☉   %s", state.selected + 1, state.points.size(),
                     p.view.c_str(), clock(p.utc_s).substr(11, 8).c_str(), p.pa_deg, p.height_rs,
                     p.automatic ? "automatic" : "analyst");
}

// A labelled number control: a drag (or typed value, ctrl+click) in its unit; the new
// value when changed.
std::optional<double> number_control(const char* label, double value, double speed, double lo, double hi, const char* format) {
  ImGui::SetNextItemWidth(ImGui::GetContentRegionAvail().x * 0.5f);
  if (ImGui::DragScalar(label, ImGuiDataType_Double, &value, float(speed), &lo, &hi, format, ImGuiSliderFlags_AlwaysClamp))
    return value;
  return std::nullopt;
}

void shell_controls(const WindowState& state, std::vector<Action>& out) {
  const ShellControls& c = state.shell;
  bool shown = c.shown;
  if (ImGui::Checkbox("draw the shell on every view", &shown)) out.push_back(action::SetShell{.shown = shown});
  const auto set = [&](std::optional<double> value, auto member) {
    if (!value) return;
    action::SetShell change;
    change.*member = *value;
    out.push_back(change);
  };
  set(number_control("longitude (°)", c.lon_deg, 0.5, -180, 180, "%.1f"), &action::SetShell::lon_deg);
  set(number_control("latitude (°)", c.lat_deg, 0.5, -90, 90, "%.1f"), &action::SetShell::lat_deg);
  set(number_control("tilt (°)", c.tilt_deg, 0.5, -90, 90, "%.1f"), &action::SetShell::tilt_deg);
  set(number_control("half-angle α (°)", c.half_angle_deg, 0.25, 0, 89, "%.1f"), &action::SetShell::half_angle_deg);
  set(number_control("aspect ratio κ", c.aspect_ratio, 0.005, 0, 0.95, "%.3f"), &action::SetShell::aspect_ratio);
  set(number_control("apex h₀ (R☉)", c.apex_height_rs, 0.05, 0.1, 300, "%.2f"), &action::SetShell::apex_height_rs);
  set(number_control("speed v (km/s)", c.speed_km_s, 5, -5000, 5000, "%.0f"), &action::SetShell::speed_km_s);
  set(number_control("accel. a (m/s²)", c.accel_m_s2, 0.5, -1000, 1000, "%.1f"), &action::SetShell::accel_m_s2);
  if (std::isfinite(c.ref_utc_s)) ImGui::TextDisabled("h₀ and v at t₀ = %s", clock(c.ref_utc_s).substr(11).c_str());
  // The same law counted from the displayed time: h₀ and v taken there.
  const double now = displayed_time(state);
  if (std::isfinite(now) && std::isfinite(c.ref_utc_s) && ImGui::SmallButton("t₀ = the shown time")) {
    const fit::ApexLaw law{c.ref_utc_s, c.apex_height_rs, c.speed_km_s, c.accel_m_s2};
    action::SetShell change;
    change.ref_utc_s = now;
    change.apex_height_rs = law.height_at(now);
    change.speed_km_s = law.speed_at(now);
    out.push_back(change);
  }
}

// The keys, as the window takes them (ui.hpp).
void key_help() {
  static constexpr const char* kKeys[][2] = {
      {"← →", "step a frame"},       {"Home End", "first, last frame"}, {"space", "play or pause"},
      {"1 – 5", "the displays"},     {"c", "next colour table"},      {"v", "one view, then all"},
      {"[ ]", "narrower, wider contrast"}, {"click", "mark the leading edge"}, {"drag", "move the selected point"},
      {"x Del", "delete the selected point"}, {"u  r", "undo, redo"},     {"t", "tie features across views"},
      {"f", "fit (the measurement)"}, {"s", "save the points"},        {"e", "export the result"},
      {"h", "these keys"},            {"q", "quit (asks if unsaved)"}};
  for (const auto& k : kKeys) {
    ImGui::TextUnformatted(k[0]);
    ImGui::SameLine(80);
    ImGui::TextDisabled("%s", k[1]);
  }
}

// "v ± σ unit", or "v unit (σ unknown)" / "not measured".
std::string with_sigma(double value, double sigma, const char* format, const char* unit) {
  if (!std::isfinite(value)) return "not measured";
  char v[64], e[64];
  std::snprintf(v, sizeof v, format, value);
  if (!std::isfinite(sigma)) return std::string(v) + " " + unit + " (σ unknown)";
  std::snprintf(e, sizeof e, format, sigma);
  return std::string(v) + " ± " + e + " " + unit;
}

// The arrival times at one target as a histogram (the plotting layer), hours after the
// first member's arrival bin, with the median marked.
void arrival_histogram(const fit::TargetArrival& a) {
  if (a.times_utc_s.size() < 2) return;
  const double lo = a.times_utc_s.front(), hi = a.times_utc_s.back();
  const int bins = 16;
  const double width = std::max(hi - lo, 3600.0) / bins;
  std::vector<double> edges(bins + 1), counts(bins, 0.0);
  for (int i = 0; i <= bins; ++i) edges[std::size_t(i)] = lo + i * width;
  for (double t : a.times_utc_s) counts[std::size_t(std::min(bins - 1, int((t - lo) / width)))] += 1.0;
  const double most = *std::max_element(counts.begin(), counts.end());
  const ImVec2 at = ImGui::GetCursorScreenPos();
  const float w = ImGui::GetContentRegionAvail().x, h = 110.0f;
  ImDrawList& draw = *ImGui::GetWindowDrawList();
  PlotMargins margins;
  margins.title = false;
  const PlotFrame frame = layout_plot(at, ImVec2(at.x + w, at.y + h), Axis{edges.front(), edges.back(), "arrival (UTC)", true},
                                      Axis{0.0, most * 1.1, "members"}, margins);
  draw_axes(draw, frame);
  draw_bars(draw, frame, edges, counts, IM_COL32(120, 170, 255, 255));
  if (a.time_p50) draw_marker(draw, frame, *a.time_p50, IM_COL32(255, 200, 40, 255), "median");
  ImGui::Dummy(ImVec2(w, h));
}

// The answer: what the last measurement says, with σ, what the data leave open, the
// 21.5 R☉ boundary and the arrival at each target, the caution beside it.
void answer(const WindowState& state) {
  const fit::Measurement* m = state.measured.get();
  if (!m) {
    ImGui::TextDisabled(state.fit_request.empty() ? "no measurement yet: fit (f)" : "measuring…");
    return;
  }
  ImGui::TextDisabled("over the %s points, %.2f s: %s", state.measured_points.c_str(), state.measured_seconds, m->status.c_str());
  // The shown CME's answer (viewer/cme_list.hpp); the top level when none was found.
  const fit::CmeMeasurement* cme = shown_cme(state);
  const fit::ShellMeasurement& shell = cme ? cme->shell : m->shell;
  const std::vector<fit::TargetArrival>& arrivals = cme ? cme->arrivals : m->arrivals;
  const std::vector<std::string>& problems = cme ? cme->problems : m->problems;
  if (cme && m->cmes.size() > 1) ImGui::Text("CME %d: %s", cme->index, cme->status.c_str());
  const auto& fit = shell.fit;
  if (!fit) {
    ImGui::TextColored(ImGui::ColorConvertU32ToFloat4(kProblem), "no shell could be fitted");
    for (const std::string& p : problems) ImGui::TextWrapped("%s", p.c_str());
    return;
  }
  constexpr double deg = 180.0 / std::numbers::pi;
  const auto& sg = fit->sigma;
  ImGui::TextUnformatted(("speed " + with_sigma(fit->law.speed_km_s, sg[fit::kSpeed], "%.0f", "km/s")).c_str());
  ImGui::TextUnformatted(("lon " + with_sigma(fit->shell.lon * deg, sg[fit::kLon] * deg, "%.1f", "°")).c_str());
  ImGui::TextUnformatted(("lat " + with_sigma(fit->shell.lat * deg, sg[fit::kLat] * deg, "%.1f", "°")).c_str());
  const double face = fit::face_on_width(fit->shell.half_angle, fit->shell.aspect_ratio) * deg;
  const double edge = fit::edge_on_width(fit->shell.aspect_ratio) * deg;
  ImGui::TextUnformatted(("face-on width " + with_sigma(face, fit::face_on_width_sigma_rad(*fit) * deg, "%.0f", "°")).c_str());
  ImGui::TextUnformatted(("edge-on width " + with_sigma(edge, fit::edge_on_width_sigma_rad(*fit) * deg, "%.0f", "°")).c_str());
  // The residual per view: √(mean r²) over each view's points (fit/shell_fit.hpp's r).
  for (std::size_t v = 0; v < shell.views.size(); ++v) {
    double sum = 0;
    int n = 0;
    for (std::size_t i = 0; i < shell.points.size() && i < fit->residuals_rs.size(); ++i)
      if (shell.points[i].view == int(v)) sum += fit->residuals_rs[i] * fit->residuals_rs[i], ++n;
    if (n > 0) ImGui::TextDisabled("residual %s: %.3f R☉ (%d points)", shell.views[v].c_str(), std::sqrt(sum / n), n);
  }
  if (!shell.not_constrained.empty()) {
    std::string keys;
    for (const std::string& k : shell.not_constrained) keys += (keys.empty() ? "" : ", ") + k;
    ImGui::PushTextWrapPos(0);
    ImGui::TextColored(ImGui::ColorConvertU32ToFloat4(kProblem), "not constrained by the data: %s", keys.c_str());
    ImGui::PopTextWrapPos();
  }
  if (const auto& b = shell.boundary; b && b->found) {
    const std::string when = clock(b->time_s).substr(5, 11);
    if (std::isfinite(b->time_sigma_s)) ImGui::Text("at 21.5 R☉: %s ± %.0f min", when.c_str(), b->time_sigma_s / 60.0);
    else ImGui::Text("at 21.5 R☉: %s (σ unknown)", when.c_str());
    ImGui::TextUnformatted(("  speed " + with_sigma(b->speed_km_s, b->speed_sigma_km_s, "%.0f", "km/s")).c_str());
  }
  if (!shell.arrival_withheld.empty()) {
    ImGui::PushTextWrapPos(0);
    ImGui::TextColored(ImGui::ColorConvertU32ToFloat4(kProblem), "no arrival: %s", shell.arrival_withheld.c_str());
    ImGui::PopTextWrapPos();
  }
  // The caution stands beside the arrival times: right under them, before any histogram.
  for (const fit::TargetArrival& a : arrivals) {
    ImGui::Text("%s: hit %.0f %%", a.target.name.c_str(), 100.0 * a.hit_probability);
    if (a.time_p50 && a.time_p05 && a.time_p95)
      ImGui::Text("  %s (5–95 %%: %s to %s)", clock(*a.time_p50).substr(5, 11).c_str(), clock(*a.time_p05).substr(5, 11).c_str(),
                  clock(*a.time_p95).substr(5, 11).c_str());
  }
  if (!arrivals.empty()) {
    ImGui::PushTextWrapPos(0);
    ImGui::TextColored(ImVec4(1.0f, 0.85f, 0.4f, 1.0f), "%s", std::string(fit::kArrivalCaution).c_str());
    ImGui::PopTextWrapPos();
  }
  for (const fit::TargetArrival& a : arrivals)
    if (a.time_p50) {
      ImGui::TextDisabled("%s: arrival times of the ensemble's hits", a.target.name.c_str());
      arrival_histogram(a);
    }
}

// Every CME the measurement found, one selectable entry each: its number, association,
// status, whether it is the primary or the analyst's, onset, central PA per view, speed and
// direction with σ. Picking one shows it everywhere the window shows "the CME".
void cme_list(const WindowState& state, std::vector<Action>& out) {
  if (!state.measured) return;
  const std::vector<CmeRow> rows = cme_rows(state);
  if (rows.empty()) {
    ImGui::TextColored(ImGui::ColorConvertU32ToFloat4(kProblem), "no CME found");
  } else {
    if (rows.size() == 1) ImGui::TextUnformatted("1 CME measured");
    else ImGui::Text("%zu CMEs measured: pick one", rows.size());
    for (const CmeRow& r : rows) {
      std::string head = "CME " + std::to_string(r.number) + "  " + r.association + ", " + r.status;
      if (r.primary) head += ", primary";
      if (r.by_analyst) head += ", your points";
      ImGui::PushID(r.number);
      if (ImGui::Selectable(head.c_str(), r.shown) && !r.shown) out.push_back(action::PickCme{r.number});
      ImGui::PopID();
      std::string pas;
      for (const CmeRow::ViewPa& v : r.central_pa) {
        char one[64];
        std::snprintf(one, sizeof one, "%s%s %.0f°", pas.empty() ? "" : ", ", v.view.c_str(), v.central_pa_deg);
        pas += one;
      }
      // Wrapped: long view names or σ "unknown" must not run out of the column.
      ImGui::PushTextWrapPos(0);
      ImGui::TextDisabled("  onset %s   PA %s", std::isfinite(r.onset_utc_s) ? clock(r.onset_utc_s).substr(11, 8).c_str() : "?",
                          pas.empty() ? "—" : pas.c_str());
      ImGui::TextDisabled("  speed %s", with_sigma(r.speed_km_s, r.speed_sigma_km_s, "%.0f", "km/s").c_str());
      ImGui::TextDisabled("  lon %s, lat %s", with_sigma(r.lon_deg, r.lon_sigma_deg, "%.1f", "°").c_str(),
                          with_sigma(r.lat_deg, r.lat_sigma_deg, "%.1f", "°").c_str());
      ImGui::PopTextWrapPos();
    }
    if (rows.size() > 1) {
      ImGui::PushTextWrapPos(0);
      ImGui::TextDisabled("primary: %s", state.measured->primary_reason.c_str());
      ImGui::PopTextWrapPos();
    }
  }
  ImGui::PushTextWrapPos(0);
  ImGui::TextDisabled("one missing? mark its leading edge away from those found and fit your points: it is measured as a CME of its own");
  ImGui::PopTextWrapPos();
}

void work_column(const WindowState& state, std::vector<Action>& out) {
  ImGui::TextUnformatted("Points");
  ImGui::TextDisabled("click a frame to mark the leading edge");
  ImGui::Text("%zu marked", state.points.size());
  ImGui::SameLine();
  if (ImGui::SmallButton("undo")) out.push_back(action::Undo{});
  ImGui::SameLine();
  if (ImGui::SmallButton("redo")) out.push_back(action::Redo{});
  if (state.selected >= 0) {
    ImGui::SameLine();
    if (ImGui::SmallButton("delete")) out.push_back(action::DeletePoint{state.selected});
  }
  if (!state.auto_points.empty()) {
    if (ImGui::SmallButton("adopt the automatic track")) out.push_back(action::Adopt{-1});
    ImGui::SameLine();
    ImGui::TextDisabled("%zu points", state.auto_points.size());
  }
  {
    const std::string track = state.track_path.empty() ? state.event_id + ".track.json" : state.track_path;
    if (ImGui::SmallButton("save (s)")) out.push_back(action::SaveTrack{track});
    if (ImGui::IsItemHovered()) ImGui::SetTooltip("to %s", track.c_str());
    ImGui::SameLine();
    if (ImGui::SmallButton("export (e)")) out.push_back(action::Export{state.event_id + ".result"});
    if (ImGui::IsItemHovered()) ImGui::SetTooltip("what measure --track writes, to %s.result/", state.event_id.c_str());
    if (state.unsaved && !state.points.empty()) {
      ImGui::SameLine();
      ImGui::TextColored(ImGui::ColorConvertU32ToFloat4(kProblem), "unsaved");
    }
  }
  ImGui::Separator();
  ImGui::TextUnformatted("Shell");
  shell_controls(state, out);
  ImGui::Separator();
  ImGui::TextUnformatted("Tie a feature across views");
  bool tying = state.tying;
  if (ImGui::Checkbox("clicks tie (t)", &tying)) out.push_back(action::TieMode{tying});
  if (!state.ties.empty()) {
    ImGui::SameLine();
    if (ImGui::SmallButton("clear")) out.push_back(action::ClearTies{});
  }
  if (state.tying)
    ImGui::TextDisabled(state.tie_first ? "now click it on another view's line" : "click a feature on one view");
  const std::size_t first = state.ties.size() > 3 ? state.ties.size() - 3 : 0;
  for (std::size_t i = first; i < state.ties.size(); ++i) {
    const TiePoint& t = state.ties[i];
    ImGui::TextColored(ImGui::ColorConvertU32ToFloat4(kTie), "%zu: lon %.1f° lat %.1f° r %.2f R☉", i + 1, t.lon_deg, t.lat_deg,
                       t.distance_rs);
    if (ImGui::IsItemHovered()) ImGui::SetTooltip("the two lines of sight pass %.2f R☉ apart", t.miss_rs);
  }
  ImGui::Separator();
  ImGui::TextUnformatted("Fit");
  ImGui::BeginDisabled(!state.fit_request.empty());
  if (ImGui::SmallButton("analyst's (f)")) out.push_back(action::Fit{"analyst"});
  ImGui::SameLine();
  if (ImGui::SmallButton("automatic")) out.push_back(action::Fit{"auto"});
  ImGui::SameLine();
  if (ImGui::SmallButton("both")) out.push_back(action::Fit{"both"});
  ImGui::EndDisabled();
  if (!state.fit_request.empty()) ImGui::TextDisabled("measuring the %s points…", state.fit_request.c_str());
  cme_list(state, out);
  answer(state);
  ImGui::Separator();
  if (!state.message.empty()) {
    ImGui::PushTextWrapPos(0);
    ImGui::TextDisabled("%s", state.message.c_str());
    ImGui::PopTextWrapPos();
  }
  ImGui::SetNextItemOpen(state.help);
  const bool help = ImGui::CollapsingHeader("Keys (h)");
  if (help != state.help) out.push_back(action::Help{help});
  if (help) key_help();
}

void readout(const WindowState& state, const std::vector<ShownView>& shown) {
  if (!state.hover) {
    ImGui::TextDisabled("Point at a frame for its position angle, height and value.");
    return;
  }
  for (const ShownView& s : shown) {
    if (s.view->name != state.hover->view || s.frame < 0) continue;
    const FramePictures& f = s.view->frames[std::size_t(s.frame)];
    const double x = state.hover->x_rs, y = state.hover->y_rs;
    const double pa = std::fmod(std::atan2(-x, y) / kDeg + 360.0, 360.0), h = std::hypot(x, y);
    const double v = value_at(*s.view, f, state.display, x, y);
    char text[256];
    if (std::isfinite(v))
      std::snprintf(text, sizeof text, "%s   PA %.1f°   height %.2f R☉   %s %+.2f σ   frame %s", s.view->name.c_str(), pa, h,
                    std::string(display_label(state.display)).c_str(), v, clock(f.utc_s).c_str());
    else
      std::snprintf(text, sizeof text, "%s   PA %.1f°   height %.2f R☉   no data   frame %s", s.view->name.c_str(), pa, h,
                    clock(f.utc_s).c_str());
    ImGui::TextUnformatted(text);
    return;
  }
  ImGui::TextDisabled("Point at a frame for its position angle, height and value.");
}

void timeline(const WindowState& state, const std::vector<ShownView>& shown, const LoadingShown& loading,
              std::vector<Action>& out) {
  const int n = int(state.timeline_utc_s.size());
  if (ImGui::ArrowButton("back", ImGuiDir_Left)) out.push_back(action::Step{-1});
  ImGui::SameLine();
  if (ImGui::Button(state.playing ? "pause" : "play", ImVec2(60, 0)))
    out.push_back(state.playing ? Action{action::Pause{}} : Action{action::Play{}});
  ImGui::SameLine();
  if (ImGui::ArrowButton("forward", ImGuiDir_Right)) out.push_back(action::Step{1});
  ImGui::SameLine();
  const std::string now = n > 0 ? clock(displayed_time(state)) : std::string("no frames yet");
  ImGui::TextUnformatted(now.c_str());
  ImGui::SameLine();
  int frame = state.frame + 1;  // people count frames from 1
  ImGui::SetNextItemWidth(-1);
  char format[32];
  std::snprintf(format, sizeof format, "frame %%d of %d", std::max(n, 1));
  if (ImGui::SliderInt("##time", &frame, 1, std::max(n, 1), format, ImGuiSliderFlags_AlwaysClamp) && n > 0)
    out.push_back(action::Frame{frame - 1});
  // Each view's frame nearest the displayed time: cadences differ between views.
  std::string matched;
  for (const ShownView& s : shown)
    if (s.frame >= 0)
      matched += (matched.empty() ? "shown: " : "   ") + s.view->name + " " +
                 clock(s.view->frames[std::size_t(s.frame)].utc_s).substr(11, 8);
  ImGui::TextUnformatted(matched.c_str());
  if (!loading.done) {
    ImGui::SameLine(0, 24);
    char text[128];
    std::snprintf(text, sizeof text, "loading %s: frame %d of %d (view %d of %d)", loading.loading.c_str(), loading.frame,
                  loading.frames, loading.view + 1, loading.views);
    const float fraction = loading.views > 0 ? (loading.view + (loading.frames > 0 ? float(loading.frame) / loading.frames : 0.0f)) / loading.views : 0.0f;
    ImGui::ProgressBar(fraction, ImVec2(-1, 0), text);
  }
}

}  // namespace

DataPoint sky_at(const PlotFrame& frame, Display display, ImVec2 pixel) {
  const DataPoint d = frame.to_data(pixel);
  if (display != Display::polar) return d;
  // PA counter-clockwise from north through east (east = −x).
  return {-d.y * std::sin(d.x * kDeg), d.y * std::cos(d.x * kDeg)};
}

std::vector<ShownView> shown_views(const WindowState& state, const std::vector<ViewPictures>& views, WindowCache* cache) {
  std::vector<ShownView> shown;
  const double now = displayed_time(state);
  for (const ViewPictures& v : views) {
    if (!state.focus.empty() && v.name != state.focus) continue;
    ShownView s;
    s.view = &v;
    s.frame = std::isfinite(now) ? nearest_frame(v, now) : -1;
    if (s.frame >= 0) {
      const FramePictures& f = v.frames[std::size_t(s.frame)];
      const ColourScale scale{state.colours, state.sigma_lo, state.sigma_hi, scale_label(state.display)};
      const ImageExtent extent = state.display == Display::polar ? polar_extent(v.polar) : sky_extent(v.grid);
      // Ids 1, 2, …: never the font atlas' (an address).
      s.panel = cached_image_panel(cache, f.image(state.display), extent, scale,
                                   reinterpret_cast<ImTextureID>(std::uintptr_t(shown.size() + 1)),
                                   state.display == Display::polar ? Sampling::nearest : Sampling::bilinear);
      if (const auto pa = height_time_pa(state, v.name)) {
        s.time_height_pa_deg = *pa;
        const ColourScale map_scale{state.colours, state.sigma_lo, state.sigma_hi, "σ"};
        s.time_height = cached_time_height_panel(cache, v, *pa, map_scale,
                                                 reinterpret_cast<ImTextureID>(std::uintptr_t(shown.size() + 101)));
        s.height_fit = cached_height_time_fit(cache, state, v);
      }
      if (state.shell.shown) s.outline = cached_shell_outline(cache, state.shell, f.observer, f.utc_s);
    }
    shown.push_back(std::move(s));
  }
  return shown;
}

std::vector<Texture> textures_of(const std::vector<ShownView>& shown) {
  std::vector<Texture> textures;
  for (const ShownView& s : shown) {
    if (s.frame >= 0) textures.push_back(s.panel.texture);
    if (std::isfinite(s.time_height_pa_deg)) textures.push_back(s.time_height.texture);
  }
  return textures;
}

std::vector<Action> draw_window(const WindowState& state, const std::vector<ShownView>& shown,
                                const std::vector<ViewPictures>& views, const LoadingShown& loading,
                                std::span<const Key> pressed, std::vector<PanelPlace>* placed) {
  std::vector<Action> out;
  ImGui::SetNextWindowPos(ImVec2(0, 0));
  ImGui::SetNextWindowSize(ImVec2(float(state.width), float(state.height)));
  ImGui::Begin("occulta", nullptr,
               ImGuiWindowFlags_NoDecoration | ImGuiWindowFlags_NoMove | ImGuiWindowFlags_NoSavedSettings |
                   ImGuiWindowFlags_NoBringToFrontOnFocus);
  keys(state, pressed, out);
  toolbar(state, views, out);
  ImGui::Separator();
  // The panels take what the readout and the timeline leave.
  const float line = ImGui::GetFrameHeightWithSpacing();
  const ImVec2 lo = ImGui::GetCursorScreenPos();
  const ImVec2 avail = ImGui::GetContentRegionAvail();
  const float panels_h = std::max(50.0f, avail.y - 4 * line - 8);
  // The work column at the right: points, shell, fit, answer, keys.
  const float side_w = std::clamp(std::floor(0.24f * avail.x), 230.0f, 330.0f);
  const float panels_w = avail.x - side_w - 8;
  if (shown.empty()) {
    ImGui::TextUnformatted(loading.done ? "No view could be loaded." : "Loading…");
  } else {
    const float w = panels_w / float(shown.size());
    // The frames above, each view's height–time panel under its frame.
    const float sky_h = std::floor(panels_h * 0.68f);
    bool over_image = false;
    for (std::size_t i = 0; i < shown.size(); ++i) {
      over_image |= view_panel(state, shown[i], views, ImVec2(std::floor(lo.x + i * w), lo.y),
                               ImVec2(std::floor(lo.x + (i + 1) * w) - 6, lo.y + sky_h), out, placed);
      height_time_panel(state, shown[i], ImVec2(std::floor(lo.x + i * w), lo.y + sky_h + 4),
                        ImVec2(std::floor(lo.x + (i + 1) * w) - 6, lo.y + panels_h));
    }
    // The mouse left the images (a snapshot has no mouse: its hover stays as scripted).
    if (state.hover && !over_image && ImGui::IsMousePosValid()) out.push_back(action::Leave{});
    if (state.dragging && !ImGui::IsMouseDown(ImGuiMouseButton_Left)) out.push_back(action::EndDrag{});
  }
  ImGui::SetCursorScreenPos(ImVec2(lo.x + panels_w + 8, lo.y));
  ImGui::BeginChild("work", ImVec2(side_w, panels_h), false);
  work_column(state, out);
  ImGui::EndChild();
  ImGui::SetCursorScreenPos(lo);
  ImGui::Dummy(ImVec2(avail.x, panels_h));
  ImGui::Separator();
  readout(state, shown);
  point_readout(state);
  for (const ViewPictures& v : views)
    for (const std::string& problem : v.problems) {
      ImGui::SameLine(0, 24);
      ImGui::TextColored(ImGui::ColorConvertU32ToFloat4(kProblem), "%s: %s", v.name.c_str(), problem.c_str());
      break;  // one line: the first problem of each view
    }
  timeline(state, shown, loading, out);
  if (state.asking_quit) {
    // Unsaved work is never lost silently.
    ImGui::OpenPopup("Unsaved points");
    ImGui::SetNextWindowPos(ImVec2(0.5f * float(state.width), 0.5f * float(state.height)), ImGuiCond_Always, ImVec2(0.5f, 0.5f));
    if (ImGui::BeginPopupModal("Unsaved points", nullptr, ImGuiWindowFlags_AlwaysAutoResize)) {
      ImGui::Text("%zu point(s) are not saved.", state.points.size());
      const std::string track = state.track_path.empty() ? state.event_id + ".track.json" : state.track_path;
      if (ImGui::Button(("save to " + track + " and quit").c_str())) {
        out.push_back(action::SaveTrack{track});
        out.push_back(action::Quit{});
      }
      if (ImGui::Button("quit (they stay in the autosave)")) out.push_back(action::QuitAnyway{});
      if (ImGui::Button("keep working")) out.push_back(action::KeepWorking{});
      ImGui::EndPopup();
    }
  }
  ImGui::End();
  return out;
}

namespace {

// The actions draw_window asks for in one frame of the current context with the mouse at
// `at` (the left button down or not).
std::vector<Action> frame_actions(const WindowState& state, const std::vector<ViewPictures>& views, ImVec2 at, bool down,
                                  WindowCache& cache, std::vector<PanelPlace>* placed = nullptr) {
  ImGuiIO& io = ImGui::GetIO();
  io.MousePos = at;
  io.MouseDown[0] = down;
  const std::vector<ShownView> shown = shown_views(state, views, &cache);
  ImGui::NewFrame();
  std::vector<Action> out = draw_window(state, shown, views, {}, {}, placed);
  ImGui::EndFrame();
  return out;
}

// A fresh Dear ImGui context of the window's size and font for `work` (no pixels drawn);
// the caller's context is current again afterwards.
template <class F>
void in_fresh_context(const WindowState& state, const HeadlessOptions& options, F work) {
  ImGuiContext* previous = ImGui::GetCurrentContext();
  ImGuiContext* context = ImGui::CreateContext();
  ImGui::SetCurrentContext(context);
  struct Restore {
    ImGuiContext *context, *previous;
    ~Restore() {
      ImGui::DestroyContext(context);
      ImGui::SetCurrentContext(previous);
    }
  } restore{context, previous};
  ImGuiIO& io = ImGui::GetIO();
  io.IniFilename = nullptr;
  io.LogFilename = nullptr;
  io.DisplaySize = ImVec2(float(state.width), float(state.height));
  io.DeltaTime = 1.0f / 60.0f;
  load_font(options.font_file, options.font_pixels);
  work();
}

}  // namespace

void click_window(WindowState& state, const std::vector<ViewPictures>& views, const action::Click& c,
                  const HeadlessOptions& options) {
  in_fresh_context(state, options, [&] {
    const ImVec2 at(c.x, c.y);
    WindowCache cache;  // the frames of one click show the same pictures
    for (int i = 0; i < 2; ++i) (void)frame_actions(state, views, at, false, cache);
    for (const bool down : {true, false})
      for (const Action& a : frame_actions(state, views, at, down, cache)) apply(state, a);
  });
}

std::vector<PanelPlace> panel_places(const WindowState& state, const std::vector<ViewPictures>& views,
                                     const HeadlessOptions& options) {
  std::vector<PanelPlace> placed;
  in_fresh_context(state, options, [&] {
    // The mouse off the window: nothing hovered, nothing asked.
    WindowCache cache;
    (void)frame_actions(state, views, ImVec2(-1e6f, -1e6f), false, cache);
    (void)frame_actions(state, views, ImVec2(-1e6f, -1e6f), false, cache, &placed);
  });
  return placed;
}

Framebuffer draw_window_headless(const WindowState& state, const std::vector<ViewPictures>& views,
                                 const HeadlessOptions& options) {
  const std::vector<ShownView> shown = shown_views(state, views);
  const std::vector<Texture> textures = textures_of(shown);
  return draw_headless(state.width, state.height, [&] { (void)draw_window(state, shown, views); }, textures, options);
}

}  // namespace occulta::viewer
