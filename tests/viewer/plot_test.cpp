// tests/viewer/plot_test.cpp — the plotting layer: Heckbert's nice numbers on cases worked
// by hand, UTC ticks across a change of date and of year, the data ↔ pixel mapping, what
// the drawing functions put in a draw list, the colour tables, and a rendered picture.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include <doctest/doctest.h>
#include <opencv2/core.hpp>

#include "imaging/time.hpp"
#include "imaging/timeheight.hpp"
#include "tests/support/support.hpp"
#include "viewer/colour_table.hpp"
#include "viewer/headless.hpp"
#include "viewer/image_panel.hpp"
#include "viewer/plot.hpp"

namespace occulta::viewer {
namespace {

double utc(const char* iso) { return imaging::utc_seconds_from_iso(iso); }

std::vector<std::string> labels(const std::vector<Tick>& ticks) {
  std::vector<std::string> out;
  for (const Tick& t : ticks) out.push_back(t.label);
  return out;
}

std::vector<std::string> dates(const std::vector<Tick>& ticks) {
  std::vector<std::string> out;
  for (const Tick& t : ticks) out.push_back(t.date);
  return out;
}

// Code points in UTF-8 text that are not spaces: the glyph quads Dear ImGui draws for it.
int visible_characters(const std::string& s) {
  int n = 0;
  for (const unsigned char c : s) n += (c & 0xC0) != 0x80 && c != ' ';
  return n;
}

// A Dear ImGui context in the middle of a frame, with the built-in font (no file needed).
struct FrameInProgress {
  ImGuiContext* context = ImGui::CreateContext();
  FrameInProgress(float width, float height) {
    ImGuiIO& io = ImGui::GetIO();
    io.IniFilename = nullptr;
    io.DisplaySize = ImVec2(width, height);
    io.DeltaTime = 1.0f / 60.0f;
    io.Fonts->AddFontDefault();
    unsigned char* texels = nullptr;
    int w = 0, h = 0;
    io.Fonts->GetTexDataAsRGBA32(&texels, &w, &h);
    ImGui::NewFrame();
  }
  ~FrameInProgress() {
    ImGui::EndFrame();
    ImGui::DestroyContext(context);
  }
  FrameInProgress(const FrameInProgress&) = delete;
  FrameInProgress& operator=(const FrameInProgress&) = delete;
};

struct Quad {
  ImVec2 min, max;
  bool glyph;  // samples the font (not the atlas' white pixel)
};

// Rectangles, glyphs and images are each four vertices (ImDrawList::PrimRect, PrimRectUV,
// ImFont::RenderText), so a list of only those reads back four vertices at a time.
std::vector<Quad> quads(const ImDrawList& draw) {
  const ImVec2 white = ImGui::GetIO().Fonts->TexUvWhitePixel;
  REQUIRE(draw.VtxBuffer.Size % 4 == 0);
  std::vector<Quad> out;
  for (int i = 0; i < draw.VtxBuffer.Size; i += 4) {
    Quad q{draw.VtxBuffer[i].pos, draw.VtxBuffer[i].pos, false};
    for (int j = i; j < i + 4; ++j) {
      const ImDrawVert& v = draw.VtxBuffer[j];
      q.min = ImVec2(std::min(q.min.x, v.pos.x), std::min(q.min.y, v.pos.y));
      q.max = ImVec2(std::max(q.max.x, v.pos.x), std::max(q.max.y, v.pos.y));
      q.glyph = q.glyph || v.uv.x != white.x || v.uv.y != white.y;
    }
    out.push_back(q);
  }
  return out;
}

}  // namespace

TEST_CASE("plot: nice numbers follow Heckbert's rule (Graphics Gems I, 1990, 61-63)") {
  // Heckbert: rounded, a fraction f of its decade goes to 1 below 1.5, to 2 below 3, to 5
  // below 7, else to 10; not rounded, to the smallest of 1, 2, 5, 10 that is ≥ f.
  CHECK(nice_number(438.0, false) == doctest::Approx(500.0));
  CHECK(nice_number(125.0, true) == doctest::Approx(100.0));
  CHECK(nice_number(2.9, true) == doctest::Approx(2.0));
  CHECK(nice_number(3.0, true) == doctest::Approx(5.0));
  CHECK(nice_number(6.99, true) == doctest::Approx(5.0));
  CHECK(nice_number(7.0, true) == doctest::Approx(10.0));
  CHECK(nice_number(2.0, false) == doctest::Approx(2.0));
  CHECK(nice_number(2.01, false) == doctest::Approx(5.0));
  CHECK(nice_number(0.0234, true) == doctest::Approx(0.02));
  // Worked by hand with Heckbert's loose labelling for 5 ticks over [105, 543]:
  // range = nice(438, up) = 500, step = nice(500/4 = 125, round) = 100, so the loose
  // range is [100, 600] and the ticks inside the data are 200 … 500.
  CHECK(nice_step(105.0, 543.0, 5) == doctest::Approx(100.0));
  CHECK(nice_range(105.0, 543.0, 5).x == doctest::Approx(100.0));
  CHECK(nice_range(105.0, 543.0, 5).y == doctest::Approx(600.0));
  const std::vector<double> ticks = nice_ticks(105.0, 543.0, 5);
  REQUIRE(ticks.size() == 4);
  CHECK(ticks.front() == doctest::Approx(200.0));
  CHECK(ticks.back() == doctest::Approx(500.0));
  // A reversed axis gets the same ticks, increasing.
  CHECK(nice_ticks(543.0, 105.0, 5) == ticks);
  // No axis, no ticks (and no endless loop): equal ends, NaN, infinity.
  CHECK(nice_ticks(3.0, 3.0, 5).empty());
  CHECK(value_ticks(std::nan(""), 1.0, 5).empty());
  CHECK(value_ticks(0.0, HUGE_VAL, 5).empty());
  CHECK(utc_ticks(0.0, std::nan(""), 5).empty());
}

TEST_CASE("plot: value tick labels carry the step's decimals and a true minus sign") {
  // [−0.3, 0.27], 5 ticks: range = nice(0.57, up) = 1, step = nice(0.25, round) = 0.2, one
  // decimal (Heckbert's nfrac = −floor(log10 0.2) = 1).
  CHECK(labels(value_ticks(-0.3, 0.27, 5)) == std::vector<std::string>{"\u22120.2", "0.0", "0.2"});
  // Eleven ticks of 0.1 over [0, 1]: each is k·0.1, so none is 0.30000000000000004 away
  // from its label, and both ends are kept.
  const std::vector<Tick> tenths = value_ticks(0.0, 1.0, 11);
  REQUIRE(tenths.size() == 11);
  CHECK(tenths[3].label == "0.3");
  CHECK(tenths.back().label == "1.0");
  // Heights of a coronagraph's field, 2 to 30 R☉: about 6 ticks → range = nice(28, up) = 50,
  // step = nice(10, round) = 10; about 10 → step = nice(50/9 = 5.6, round) = 5.
  CHECK(labels(value_ticks(2.0, 30.0, 6)) == std::vector<std::string>{"10", "20", "30"});
  CHECK(labels(value_ticks(2.0, 30.0, 10)) == std::vector<std::string>{"5", "10", "15", "20", "25", "30"});
  // An axis keeps at least 4 labelled ticks where it is long enough for them: 300 px at one
  // tick per 55 px asks for 5 (three inside), so it asks again for 10.
  CHECK(labels(axis_ticks(Axis{2.0, 30.0, "", false}, 300.0f, 55.0f)).size() == 6);
  CHECK(labels(axis_ticks(Axis{2.0, 30.0, "", false}, 100.0f, 55.0f)) == std::vector<std::string>{"10", "20", "30"});
}

TEST_CASE("plot: UTC ticks across a change of date show the date where it changes") {
  // 21:10 to 04:50 next day, at most 6 intervals: 1 h would give 7.7, so 2 h.
  const double lo = utc("2031-03-04T21:10:00"), hi = utc("2031-03-05T04:50:00");
  CHECK(utc_tick_step(lo, hi, 6) == 7200.0);
  const std::vector<Tick> ticks = utc_ticks(lo, hi, 6);
  CHECK(labels(ticks) == std::vector<std::string>{"22:00", "00:00", "02:00", "04:00"});
  CHECK(dates(ticks) == std::vector<std::string>{"2031-03-04", "2031-03-05", "", ""});
  CHECK(ticks[1].value == utc("2031-03-05T00:00:00"));
  // The same span reversed (time growing to the left) ticks the same times.
  CHECK(labels(utc_ticks(hi, lo, 6)) == labels(ticks));
}

TEST_CASE("plot: UTC ticks across a new year, in seconds, and in days") {
  // 160 s at most 6 intervals: 30 s steps (15 s would give 10.7), labelled to the second.
  const std::vector<Tick> seconds = utc_ticks(utc("2031-12-31T23:58:20"), utc("2032-01-01T00:01:00"), 6);
  CHECK(labels(seconds) ==
        std::vector<std::string>{"23:58:30", "23:59:00", "23:59:30", "00:00:00", "00:00:30", "00:01:00"});
  CHECK(dates(seconds) == std::vector<std::string>{"2031-12-31", "", "", "2032-01-01", "", ""});
  // Nine and a half days at most 5 intervals: 2 days, ticks at midnight labelled by date, on
  // even day numbers since 2000-01-01 (2031-02-27 is day 11 380: 31 years of 365 days and
  // 8 leap days from 2000 to 2030 make 11 323, plus 31 + 26 days of 2031).
  const std::vector<Tick> days = utc_ticks(utc("2031-02-26T06:00"), utc("2031-03-07T18:00"), 5);
  CHECK(labels(days) == std::vector<std::string>{"2031-02-27", "2031-03-01", "2031-03-03", "2031-03-05", "2031-03-07"});
  // Three hours over a whole day: ticks at 00, 03, … , 21 h, never at 01:00 or 02:30.
  const std::vector<Tick> hours = utc_ticks(utc("2031-03-05T00:00"), utc("2031-03-05T23:59"), 8);
  CHECK(labels(hours).front() == "00:00");
  CHECK(labels(hours).back() == "21:00");
  CHECK(hours.size() == 8);
}

TEST_CASE("plot: data ↔ pixel mapping puts lo at the left and bottom, and inverts") {
  // PA from 360 at the left to 0 at the right (reversed), height 2–30 R☉ up.
  const PlotFrame frame{ImVec2(100, 50), ImVec2(500, 350), Axis{360.0, 0.0, "PA (deg)", false},
                        Axis{2.0, 30.0, "height (R\u2609)", false}};
  CHECK(frame.to_pixel(360.0, 2.0).x == doctest::Approx(100.0));
  CHECK(frame.to_pixel(360.0, 2.0).y == doctest::Approx(350.0));
  CHECK(frame.to_pixel(0.0, 30.0).x == doctest::Approx(500.0));
  CHECK(frame.to_pixel(0.0, 30.0).y == doctest::Approx(50.0));
  CHECK(frame.to_pixel(180.0, 16.0).x == doctest::Approx(300.0));
  CHECK(frame.to_pixel(180.0, 16.0).y == doctest::Approx(200.0));
  for (const double pa : {0.0, 17.5, 123.25, 359.0}) {
    for (const double h : {2.0, 5.5, 29.75}) {
      const DataPoint back = frame.to_data(frame.to_pixel(pa, h));
      CHECK(back.x == doctest::Approx(pa).epsilon(1e-5));
      CHECK(back.y == doctest::Approx(h).epsilon(1e-5));
    }
  }
  // A time axis keeps sub-second round trips although its values are ~1e9 s.
  const double t0 = utc("2031-03-04T21:10:00");
  const PlotFrame timeline{ImVec2(0, 0), ImVec2(1000, 100), Axis{t0, t0 + 3 * 3600.0, "time (UTC)", true},
                           Axis{0.0, 1.0, "", false}};
  for (const double dt : {0.0, 61.0, 5000.5, 10799.0})
    CHECK(std::abs(timeline.to_data(timeline.to_pixel(t0 + dt, 0.5)).x - (t0 + dt)) < 0.05);
}

TEST_CASE("plot: axes draw one tick mark and one label per tick, outside the data area") {
  FrameInProgress in_frame(800, 500);
  ImDrawList& draw = *ImGui::GetBackgroundDrawList();
  const PlotStyle style;
  const double t0 = utc("2031-03-04T21:10:00");
  const PlotFrame frame = layout_plot(ImVec2(0, 0), ImVec2(800, 500), Axis{t0, t0 + 8 * 3600.0, "time (UTC)", true},
                                      Axis{2.0, 30.0, "height (R\u2609)", false}, PlotMargins{}, style);
  REQUIRE(frame.pixel_min.x > 30.0f);  // room for the labels at the left and below
  REQUIRE(frame.pixel_max.y < 450.0f);
  const AxesDrawn drawn = draw_axes(draw, frame, style);
  REQUIRE(drawn.x_ticks.size() >= 4);
  REQUIRE(drawn.y_ticks.size() >= 4);
  CHECK(drawn.x_ticks.front().date == "2031-03-04");  // the first tick and the change of date
  CHECK(std::count_if(drawn.x_ticks.begin(), drawn.x_ticks.end(), [](const Tick& t) { return !t.date.empty(); }) == 2);

  int expected_glyphs = visible_characters(frame.x.label) + visible_characters(frame.y.label);
  for (const Tick& t : drawn.x_ticks) expected_glyphs += visible_characters(t.label) + visible_characters(t.date);
  for (const Tick& t : drawn.y_ticks) expected_glyphs += visible_characters(t.label);

  // Left of the widest y tick label (right-aligned at the tick) only the y label is drawn.
  float widest_y = 0.0f;
  for (const Tick& t : drawn.y_ticks) widest_y = std::max(widest_y, ImGui::CalcTextSize(t.label.c_str()).x);
  const float y_label_right = frame.pixel_min.x - 1.0f - style.tick_px - style.pad_px - widest_y;
  int glyphs = 0, x_marks = 0, y_marks = 0, glyphs_on_data = 0;
  ImVec2 far_left_min(1e9f, 1e9f), far_left_max(-1e9f, -1e9f);  // the y label's glyphs
  for (const Quad& q : quads(draw)) {
    const float w = q.max.x - q.min.x, h = q.max.y - q.min.y;
    if (q.glyph) {
      ++glyphs;
      const bool on_data = q.min.x < frame.pixel_max.x && q.max.x > frame.pixel_min.x && q.min.y < frame.pixel_max.y &&
                           q.max.y > frame.pixel_min.y;
      glyphs_on_data += on_data;
      if (q.max.x < y_label_right) {
        far_left_min = ImVec2(std::min(far_left_min.x, q.min.x), std::min(far_left_min.y, q.min.y));
        far_left_max = ImVec2(std::max(far_left_max.x, q.max.x), std::max(far_left_max.y, q.max.y));
      }
    } else if (w == 1.0f && h == style.tick_px && q.min.y == frame.pixel_max.y + 1) {
      ++x_marks;
    } else if (h == 1.0f && w == style.tick_px && q.max.x == frame.pixel_min.x - 1) {
      ++y_marks;
    }
  }
  CHECK(glyphs == expected_glyphs);
  CHECK(glyphs_on_data == 0);
  CHECK(x_marks == static_cast<int>(drawn.x_ticks.size()));
  CHECK(y_marks == static_cast<int>(drawn.y_ticks.size()));
  // "height (R☉)" turned to read upwards: its glyphs span more rows than columns.
  CHECK(far_left_max.y - far_left_min.y > 3.0f * (far_left_max.x - far_left_min.x));
}

TEST_CASE("plot: an image panel puts its texture on its extent, clipped to the data area") {
  FrameInProgress in_frame(600, 400);
  ImDrawList& draw = *ImGui::GetBackgroundDrawList();
  // PA 360 → 0 across (reversed), height 2 → 30 up; the image covers PA 300 → 60, 4–20 R☉.
  const PlotFrame frame{ImVec2(100, 50), ImVec2(500, 350), Axis{360.0, 0.0, "PA (deg)", false},
                        Axis{2.0, 30.0, "height (R\u2609)", false}};
  const auto texture = reinterpret_cast<ImTextureID>(std::uintptr_t{0x5eed});
  draw_image(draw, frame, texture, ImageExtent{300.0, 60.0, 4.0, 20.0});
  const ImDrawCmd* command = nullptr;
  for (const ImDrawCmd& c : draw.CmdBuffer)
    if (c.TextureId == texture && c.ElemCount > 0) command = &c;
  REQUIRE(command != nullptr);
  CHECK(command->ClipRect.x == 100.0f);
  CHECK(command->ClipRect.y == 50.0f);
  CHECK(command->ClipRect.z == 500.0f);
  CHECK(command->ClipRect.w == 350.0f);
  // PrimRectUV: vertex 0 is the top-left corner: PA 300, 20 R☉ → (100 + 60/360·400, 350 − 18/28·300).
  const auto corner = [&](const ImDrawCmd& c, unsigned k) {
    return draw.VtxBuffer[static_cast<int>(c.VtxOffset + draw.IdxBuffer[static_cast<int>(c.IdxOffset + k)])];
  };
  const ImDrawVert& top_left = corner(*command, 0);
  CHECK(top_left.pos.x == doctest::Approx(100.0 + 60.0 / 360.0 * 400.0));
  CHECK(top_left.pos.y == doctest::Approx(350.0 - 18.0 / 28.0 * 300.0));
  CHECK(top_left.uv.x == 0.0f);  // texel column 0 is the image's left (PA 300), as drawn
  CHECK(top_left.uv.y == 0.0f);
  const ImDrawVert& bottom_right = corner(*command, 2);
  CHECK(bottom_right.pos.x == doctest::Approx(100.0 + 300.0 / 360.0 * 400.0));
  CHECK(bottom_right.pos.y == doctest::Approx(350.0 - 2.0 / 28.0 * 300.0));

  // With x.lo < x.hi the same extent (left = 300 > right = 60) lies mirrored: the quad keeps
  // its winding and the texture is flipped instead.
  ImDrawList& other = *ImGui::GetForegroundDrawList();
  const PlotFrame forward{ImVec2(100, 50), ImVec2(500, 350), Axis{0.0, 360.0, "", false}, Axis{2.0, 30.0, "", false}};
  draw_image(other, forward, texture, ImageExtent{300.0, 60.0, 4.0, 20.0});
  bool found = false;
  for (const ImDrawCmd& c : other.CmdBuffer) {
    if (c.TextureId != texture || c.ElemCount == 0) continue;
    const ImDrawVert& v0 = other.VtxBuffer[static_cast<int>(c.VtxOffset + other.IdxBuffer[static_cast<int>(c.IdxOffset)])];
    CHECK(v0.pos.x == doctest::Approx(100.0 + 60.0 / 360.0 * 400.0));
    CHECK(v0.uv.x == 1.0f);
    found = true;
  }
  CHECK(found);
}

TEST_CASE("plot: colour tables, their values and the texels of an image") {
  // grey is linear from black to white: the middle is round(127.5) = 128.
  CHECK(colour_at(ColourTable::grey, 0.5) == IM_COL32(128, 128, 128, 255));
  CHECK(colour_at(ColourTable::grey, -3.0) == IM_COL32(0, 0, 0, 255));
  CHECK(colour_at(ColourTable::grey, 7.0) == IM_COL32(255, 255, 255, 255));
  // blue_red, from −4σ to +4σ: 0σ is the middle stop, −4σ the first, +4σ the last.
  const ColourScale sigma{ColourTable::blue_red, -4.0, 4.0, "difference (\u03c3)", IM_COL32(0, 0, 0, 255)};
  const ColourStop middle = colour_stops(ColourTable::blue_red)[2];
  REQUIRE(middle.at == 0.5f);
  CHECK(colour_of(sigma, 0.0) == IM_COL32(middle.r, middle.g, middle.b, 255));
  const ColourStop first = colour_stops(ColourTable::blue_red).front();
  CHECK(colour_of(sigma, -4.0) == IM_COL32(first.r, first.g, first.b, 255));
  CHECK(colour_of(sigma, std::nan("")) == IM_COL32(0, 0, 0, 255));
  for (const ColourTable t : colour_tables()) CHECK(colour_table_named(colour_table_name(t)) == t);
  CHECK_FALSE(colour_table_named("rainbow").has_value());

  // A 3 × 2 image in FITS row order: row 0 (the bottom) at −4σ, row 1 (the top) at +4σ, one NaN.
  cv::Mat values(2, 3, CV_32F, cv::Scalar(-4.0f));
  values.row(1).setTo(4.0f);
  values.at<float>(1, 2) = std::nanf("");
  const std::vector<std::uint8_t> t = texels(values, sigma);
  REQUIRE(t.size() == 2u * 3u * 4u);
  const ColourStop last = colour_stops(ColourTable::blue_red).back();
  CHECK(t[0] == last.r);  // texel row 0 is drawn at the top: FITS row 1
  CHECK(t[1] == last.g);
  CHECK(t[2] == last.b);
  CHECK(t[8] == 0);  // the NaN: no_data
  CHECK(t[3 * 4 + 0] == first.r);  // texel row 1: FITS row 0
  CHECK(t[3 * 4 + 2] == first.b);
}

TEST_CASE("plot: a colour bar runs from the scale's lo at the bottom to hi at the top") {
  FrameInProgress in_frame(600, 400);
  ImDrawList& draw = *ImGui::GetBackgroundDrawList();
  const ColourScale sigma{ColourTable::blue_red, -4.0, 4.0, "\u03c3", IM_COL32(0, 0, 0, 255)};
  const PlotFrame frame{ImVec2(60, 40), ImVec2(460, 340), Axis{0.0, 1.0, "", false}, Axis{0.0, 1.0, "", false}};
  const std::vector<Tick> ticks = draw_colour_bar(draw, frame, sigma);
  CHECK(labels(ticks) == std::vector<std::string>{"\u22124", "\u22122", "0", "2", "4"});
  // The gradient's vertices: colour_at(0) on the bottom edge, colour_at(1) on the top edge,
  // all right of the data area.
  int bottom = 0, top = 0;
  for (const ImDrawVert& v : draw.VtxBuffer) {
    if (v.pos.y == 340.0f && v.pos.x > 460.0f && v.col == colour_at(sigma.table, 0.0)) ++bottom;
    if (v.pos.y == 40.0f && v.pos.x > 460.0f && v.col == colour_at(sigma.table, 1.0)) ++top;
  }
  CHECK(bottom == 2);
  CHECK(top == 2);
}

TEST_CASE("plot: a rendered image panel shows its texels, outline and colour bar where the frame says") {
  // Drawn headless through viewer/raster with DejaVu Sans, and written for a person to look
  // at: test-tmp/plot-rendered/panel.png.
  constexpr int kCols = 40, kRows = 30;
  cv::Mat values(kRows, kCols, CV_32F);
  for (int r = 0; r < kRows; ++r)
    for (int c = 0; c < kCols; ++c) values.at<float>(r, c) = static_cast<float>(c < kCols / 2 ? -3.0 : 3.0);
  const ColourScale sigma{ColourTable::blue_red, -4.0, 4.0, "difference (\u03c3)", IM_COL32(0, 0, 0, 255)};
  const std::vector<std::uint8_t> image = texels(values, sigma);
  const Texture texture{reinterpret_cast<ImTextureID>(std::uintptr_t{7}), kCols, kRows, image.data(), Sampling::nearest,
                        Wrap::clamp_to_edge};
  const PlotStyle style;
  PlotFrame frame;
  const Framebuffer picture = draw_headless(
      640, 400,
      [&] {
        ImDrawList& draw = *ImGui::GetBackgroundDrawList();
        const PlotMargins margins{true, true, &sigma};
        frame = layout_plot(ImVec2(0, 0), ImVec2(640, 400), Axis{0.0, 40.0, "x (px)", false},
                            Axis{0.0, 30.0, "y (px)", false}, margins, style);
        draw_image(draw, frame, texture.id, ImageExtent{0.0, 40.0, 0.0, 30.0});
        PlotStyle no_grid = style;
        no_grid.grid = 0;
        draw_axes(draw, frame, no_grid);
        draw_colour_bar(draw, frame, sigma, style);
        draw_title(draw, frame, "two halves", style);
      },
      {&texture, 1});
  write_png(picture, test::scratch_dir("plot-rendered") / "panel.png");
  const auto at = [&](ImVec2 p) { return picture.at(static_cast<int>(p.x), static_cast<int>(p.y)); };
  const auto opaque = [](ImU32 c) { return c | IM_COL32_A_MASK; };
  // Inside the data area: left half −3σ, right half +3σ.
  CHECK(at(frame.to_pixel(5.0, 15.0)) == opaque(colour_of(sigma, -3.0)));
  CHECK(at(frame.to_pixel(35.0, 15.0)) == opaque(colour_of(sigma, 3.0)));
  // The outline one pixel outside the data area, left of its middle.
  CHECK(picture.at(static_cast<int>(frame.pixel_min.x) - 1, static_cast<int>((frame.pixel_min.y + frame.pixel_max.y) / 2)) ==
        style.axis);
  // Right of the data area, the colour bar's ends: lo at the bottom, hi at the top.
  const int bar_x = static_cast<int>(frame.pixel_max.x + 1 + 3 * style.pad_px + style.colour_bar_px / 2);
  // The strip's colours are interpolated between its vertices, sampled at pixel centres
  // half a pixel inside the ends: within 2 levels of the table's ends.
  const auto near = [](ImU32 a, ImU32 b) {
    for (int shift = 0; shift < 32; shift += 8)
      if (std::abs(static_cast<int>((a >> shift) & 0xFF) - static_cast<int>((b >> shift) & 0xFF)) > 2) return false;
    return true;
  };
  CHECK(near(picture.at(bar_x, static_cast<int>(frame.pixel_max.y) - 1), colour_at(sigma.table, 0.0)));
  CHECK(near(picture.at(bar_x, static_cast<int>(frame.pixel_min.y)), colour_at(sigma.table, 1.0)));
  CHECK_FALSE(near(picture.at(bar_x, static_cast<int>(frame.pixel_min.y)), colour_at(sigma.table, 0.0)));
}

}  // namespace occulta::viewer

namespace occulta::viewer {

TEST_CASE("plot: a time–height map panel shows the front where its law puts it") {
  // A time–height map made here: 30 frames 12 min apart (two missing), heights 2–20 R☉ in
  // steps of 0.1, a front 4σ bright and 0.3 R☉ thick rising as h(t) = 3 + 2·t_h R☉ (t_h in
  // hours since the first frame), 0σ elsewhere. Drawn on a UTC axis and a height axis with
  // a blue_red colour bar; the front's first three hours outlined. Written for a person to
  // look at: test-tmp/plot-time-height/time_height.png.
  const double t0 = utc("2031-03-04T22:00:00");
  constexpr double kHeight0 = 2.0, kStep = 0.1;
  constexpr int kRows = 181;
  const auto front_rs = [&](double t) { return 3.0 + 2.0 * (t - t0) / 3600.0; };
  imaging::TimeMap map;
  map.axis_start = kHeight0;
  map.axis_step = kStep;
  std::vector<cv::Mat> columns;
  for (int k = 0; k < 30; ++k) {
    if (k == 11 || k == 12) continue;  // a gap in the data
    const double t = t0 + 720.0 * k;
    map.utc_s.push_back(t);
    cv::Mat column(kRows, 1, CV_32F, cv::Scalar(0.0f));
    for (int r = 0; r < kRows; ++r)
      if (std::abs(kHeight0 + kStep * r - front_rs(t)) <= 0.15) column.at<float>(r, 0) = 4.0f;
    columns.push_back(column);
  }
  cv::hconcat(columns, map.values);
  const double t_start = t0 - 360.0, t_end = t0 + 29 * 720.0 + 360.0;
  const cv::Mat on_axis = imaging::render_on_time_axis(map, t_start, t_end, 300);
  const ColourScale sigma{ColourTable::blue_red, -4.0, 4.0, "running difference (\u03c3)", IM_COL32(0, 0, 0, 255)};
  // Row r of the map is the height kHeight0 + r·kStep at its centre: the image's edges are
  // half a step beyond; its columns span [t_start, t_end] edge to edge.
  const ImageExtent extent = time_map_extent(map, t_start, t_end);
  CHECK(extent.bottom == doctest::Approx(kHeight0 - kStep / 2));
  CHECK(extent.top == doctest::Approx(kHeight0 + (kRows - 0.5) * kStep));
  const ImagePanel panel =
      make_image_panel(on_axis, extent, sigma, reinterpret_cast<ImTextureID>(std::uintptr_t{9}));
  PlotFrame frame;
  AxesDrawn drawn;
  const Framebuffer picture = draw_headless(
      900, 520,
      [&] {
        ImDrawList& draw = *ImGui::GetBackgroundDrawList();
        const PanelAxes axes{Axis{t_start, t_end, "time (UTC)", true}, Axis{extent.bottom, extent.top, "height (R\u2609)", false},
                             "time\u2013height map at PA 270\u00b0 (made in the test)", false};
        frame = draw_image_panel(draw, ImVec2(0, 0), ImVec2(900, 520), panel, axes);
        drawn.x_ticks = axis_ticks(frame.x, frame.pixel_max.x - frame.pixel_min.x, PlotStyle{}.x_spacing_px);
        const std::vector<DataPoint> track{{t0, front_rs(t0)}, {t0 + 3 * 3600.0, front_rs(t0 + 3 * 3600.0)}};
        draw_line(draw, frame, track, IM_COL32(255, 220, 60, 255), 2.0f);
        const LegendEntry legend[] = {{"front, first 3 h", IM_COL32(255, 220, 60, 255), false}};
        draw_legend(draw, frame, legend);
      },
      {&panel.texture, 1});
  write_png(picture, test::scratch_dir("plot-time-height") / "time_height.png");
  const auto at = [&](double t, double h) {
    const ImVec2 p = frame.to_pixel(t, h);
    return picture.at(static_cast<int>(p.x), static_cast<int>(p.y));
  };
  const auto opaque = [](ImU32 c) { return c | IM_COL32_A_MASK; };
  // After the outlined hours: on the front 4σ, 2 R☉ above and below it 0σ, in the gap no data.
  const double t_late = t0 + 24 * 720.0;
  CHECK(at(t_late, front_rs(t_late)) == opaque(colour_of(sigma, 4.0)));
  CHECK(at(t_late, front_rs(t_late) + 2.0) == opaque(colour_of(sigma, 0.0)));
  CHECK(at(t_late, front_rs(t_late) - 2.0) == opaque(colour_of(sigma, 0.0)));
  CHECK(at(t0 + 11.5 * 720.0, 11.3) == sigma.no_data);  // off the grid lines
  // The time axis crosses midnight: its first tick and its 00:00 tick carry dates.
  REQUIRE(!drawn.x_ticks.empty());
  CHECK(drawn.x_ticks.front().date == "2031-03-04");
  CHECK(std::any_of(drawn.x_ticks.begin(), drawn.x_ticks.end(),
                    [](const Tick& t) { return t.label == "00:00" && t.date == "2031-03-05"; }));
}

}  // namespace occulta::viewer

namespace occulta::viewer {

TEST_CASE("plot: a polar image's extent runs from edge to edge of its PA and height cells") {
  imaging::PolarGrid polar;
  polar.pa_step_deg = 0.5;
  polar.pa_count = 720;
  polar.height_min_rs = 2.0;
  polar.height_step_rs = 0.1;
  polar.height_count = 181;  // centres 2.0 … 20.0 R☉
  const ImageExtent extent = polar_extent(polar);
  CHECK(extent.left == doctest::Approx(-0.25));
  CHECK(extent.right == doctest::Approx(359.75));
  CHECK(extent.bottom == doctest::Approx(1.95));
  CHECK(extent.top == doctest::Approx(20.05));
}

TEST_CASE("plot: an equal-scale frame keeps circles round, centred in the space it had") {
  const PlotFrame wide{ImVec2(100, 50), ImVec2(500, 350), Axis{-6.0, 6.0, "x (R\u2609)", false},
                       Axis{-6.0, 6.0, "y (R\u2609)", false}};
  const PlotFrame square = with_equal_scale(wide);
  // 400 × 300 px for 12 × 12 R☉: 25 px per R☉ both ways, 300 px wide, centred (50 px each side).
  CHECK(square.pixel_min.x == 150.0f);
  CHECK(square.pixel_max.x == 450.0f);
  CHECK(square.pixel_min.y == 50.0f);
  CHECK(square.pixel_max.y == 350.0f);
  CHECK(square.to_pixel(1.0, 0.0).x - square.to_pixel(0.0, 0.0).x == doctest::Approx(25.0));
  CHECK(square.to_pixel(0.0, 0.0).y - square.to_pixel(0.0, 1.0).y == doctest::Approx(25.0));
}

TEST_CASE("plot: N and E marks follow the axes: north to +y, east to −x") {
  // Glyph centres of the labels, in drawing order (N, then E). Without anti-aliasing every
  // line is a quad too, so the list reads back four vertices at a time.
  const auto labels_at = [](const PlotFrame& frame) {
    ImDrawList& draw = *ImGui::GetForegroundDrawList();
    draw._ResetForNewFrame();
    draw.PushTextureID(ImGui::GetIO().Fonts->TexID);
    draw.PushClipRectFullScreen();
    draw.Flags = ImDrawListFlags_None;
    draw_north_east(draw, frame);
    std::vector<ImVec2> centres;
    for (const Quad& q : quads(draw))
      if (q.glyph) centres.push_back(ImVec2((q.min.x + q.max.x) / 2, (q.min.y + q.max.y) / 2));
    return centres;
  };
  FrameInProgress in_frame(600, 400);
  // x west to the right (θx as seen from the observer), y north up: N above, E to the left.
  const std::vector<ImVec2> usual =
      labels_at(PlotFrame{ImVec2(100, 50), ImVec2(500, 350), Axis{-6, 6, "", false}, Axis{-6, 6, "", false}});
  REQUIRE(usual.size() == 2);
  CHECK(usual[0].y < usual[1].y - 10.0f);  // N higher on screen than E
  CHECK(usual[1].x < usual[0].x - 10.0f);  // E left of N
  CHECK(usual[0].x > 100.0f);              // both inside the data area
  CHECK(usual[1].x > 100.0f);
  // x reversed (west to the left): E to the right of N.
  const std::vector<ImVec2> mirrored =
      labels_at(PlotFrame{ImVec2(100, 50), ImVec2(500, 350), Axis{6, -6, "", false}, Axis{-6, 6, "", false}});
  REQUIRE(mirrored.size() == 2);
  CHECK(mirrored[1].x > mirrored[0].x + 10.0f);
  CHECK(mirrored[0].y < mirrored[1].y - 10.0f);
}

TEST_CASE("plot: a rendered sky panel in R☉ with the limb, an occulter edge, N/E and a colour bar") {
  // A sky image made here: brightness falling as 1/r³ outside 2.2 R☉ (r in R☉ from Sun
  // centre), no data inside; x, y from −6 to 6 R☉. Written for a person to look at:
  // test-tmp/plot-sky/sky.png.
  constexpr int kSide = 120;
  constexpr double kHalf = 6.0, kOcculter = 2.2;
  cv::Mat values(kSide, kSide, CV_32F);
  for (int row = 0; row < kSide; ++row) {
    for (int col = 0; col < kSide; ++col) {
      const double x = -kHalf + (col + 0.5) * 2 * kHalf / kSide, y = -kHalf + (row + 0.5) * 2 * kHalf / kSide;
      const double r = std::hypot(x, y);
      values.at<float>(row, col) = r < kOcculter ? std::nanf("") : static_cast<float>(std::pow(kOcculter / r, 3));
    }
  }
  const ColourScale brightness{ColourTable::amber, 0.0, 1.0, "brightness (occulter edge = 1)", IM_COL32(0, 0, 0, 255)};
  // The image on a registered grid: Sun centre in the middle, 0.1 R☉ per pixel, so its
  // pixel edges run from −6 to 6 R☉.
  imaging::RegisteredGrid grid;
  grid.width = grid.height = kSide;
  grid.sun_center_px = Eigen::Vector2d((kSide - 1) / 2.0, (kSide - 1) / 2.0);
  grid.rs_per_px = 2 * kHalf / kSide;
  const ImageExtent extent = sky_extent(grid);
  CHECK(extent.left == doctest::Approx(-kHalf));
  CHECK(extent.right == doctest::Approx(kHalf));
  CHECK(extent.bottom == doctest::Approx(-kHalf));
  CHECK(extent.top == doctest::Approx(kHalf));
  const ImagePanel panel =
      make_image_panel(values, extent, brightness, reinterpret_cast<ImTextureID>(std::uintptr_t{11}), Sampling::bilinear);
  const ImU32 limb = IM_COL32(90, 200, 255, 255);
  PlotFrame frame;
  const Framebuffer picture = draw_headless(
      640, 560,
      [&] {
        ImDrawList& draw = *ImGui::GetBackgroundDrawList();
        const PanelAxes axes{Axis{-kHalf, kHalf, "x (R\u2609, west)", false}, Axis{-kHalf, kHalf, "y (R\u2609, north)", false},
                             "sky image, north up (made in the test)", true};
        frame = draw_image_panel(draw, ImVec2(0, 0), ImVec2(640, 560), panel, axes);
        draw_circle(draw, frame, 0.0, 0.0, 1.0, limb, 2.0f);
        draw_circle(draw, frame, 0.0, 0.0, kOcculter, IM_COL32(255, 255, 255, 255), 1.0f);
        draw_north_east(draw, frame);
      },
      {&panel.texture, 1});
  write_png(picture, test::scratch_dir("plot-sky") / "sky.png");
  // The limb crosses the +x axis at 1 R☉: the 2-px line covers the pixel there.
  const ImVec2 on_limb = frame.to_pixel(1.0, 0.0);
  CHECK(picture.at(static_cast<int>(on_limb.x), static_cast<int>(on_limb.y)) == limb);
  // Inside the occulter, off the limb: no data (black); outside it the image (not black).
  const ImVec2 inside = frame.to_pixel(0.5, 0.5), outside = frame.to_pixel(3.0, 3.0);
  CHECK(picture.at(static_cast<int>(inside.x), static_cast<int>(inside.y)) == IM_COL32(0, 0, 0, 255));
  CHECK(picture.at(static_cast<int>(outside.x), static_cast<int>(outside.y)) != IM_COL32(0, 0, 0, 255));
  CHECK(frame.pixel_max.x - frame.pixel_min.x == frame.pixel_max.y - frame.pixel_min.y);
}

}  // namespace occulta::viewer

namespace occulta::viewer {

TEST_CASE("plot: angle ticks fall on multiples that divide the quadrants") {
  // Steps 1, 2, 5, 10, 15, 30, 45, 90° (common practice for angle axes: a PA axis then
  // marks north 0°, east 90°, south 180°, west 270°); the smallest at least min_step apart.
  CHECK(labels(degree_ticks(0.0, 360.0, 40.0)) ==
        std::vector<std::string>{"0", "45", "90", "135", "180", "225", "270", "315", "360"});
  // A polar image's extent, half a 0.5° column beyond 0 and short of 360: 360 is outside.
  CHECK(labels(degree_ticks(-0.25, 359.75, 46.0)) == std::vector<std::string>{"0", "90", "180", "270"});
  CHECK(labels(degree_ticks(-20.0, 20.0, 8.0)) == std::vector<std::string>{"\u221220", "\u221210", "0", "10", "20"});
  // lo > hi (an axis running the other way): the same ticks, increasing.
  CHECK(labels(degree_ticks(90.0, 0.0, 40.0)) == std::vector<std::string>{"0", "45", "90"});
  CHECK(degree_ticks(0.0, 0.0, 1.0).empty());
  CHECK(degree_ticks(0.0, std::nan(""), 1.0).empty());
  // On an axis: 680 px across 360° at one label per 100 px may take ticks 75 px apart,
  // 75 · 360 / 680 = 39.7° → 45°; at 400 px, 67.5° → 90°.
  Axis pa{0.0, 360.0, "position angle (\u00b0)", false, true};
  CHECK(axis_ticks(pa, 680.0f, 100.0f).size() == 9);
  CHECK(labels(axis_ticks(pa, 400.0f, 100.0f)) == std::vector<std::string>{"0", "90", "180", "270", "360"});
}

TEST_CASE("plot: a legend row lays its entries side by side, each a sample and its label") {
  FrameInProgress in_frame(800, 200);
  ImDrawList& draw = *ImGui::GetBackgroundDrawList();
  const LegendEntry entries[] = {{"leading edge", IM_COL32(255, 225, 0, 255), false},
                                 {"points", IM_COL32(0, 220, 255, 255), true}};
  const ImVec2 at(40.0f, 100.0f);
  const float width = draw_legend_row(draw, at, entries);
  const float line = ImGui::GetFontSize();
  std::vector<Quad> samples, glyphs;
  for (const Quad& q : quads(draw)) (q.glyph ? glyphs : samples).push_back(q);
  CHECK(static_cast<int>(glyphs.size()) == visible_characters("leading edge") + visible_characters("points"));
  REQUIRE(samples.size() == 2);
  // The line sample: two text lines wide, 2 px tall, at the left; the box: a square.
  CHECK(samples[0].min.x == at.x);
  CHECK(samples[0].max.x - samples[0].min.x == 2.0f * line);
  CHECK(samples[0].max.y - samples[0].min.y == 2.0f);
  CHECK(samples[1].max.x - samples[1].min.x == samples[1].max.y - samples[1].min.y);
  // In order, not overlapping: each label right of its own sample, the second entry's
  // sample right of the first label, and everything inside the width returned, on one line.
  float first_label_right = 0.0f, second_label_left = 1e9f;
  for (const Quad& q : glyphs) {
    CHECK(q.min.y >= at.y - 1.0f);
    CHECK(q.max.y <= at.y + line + 1.0f);
    CHECK(q.max.x <= at.x + width);
    if (q.max.x <= samples[1].min.x) first_label_right = std::max(first_label_right, q.max.x);
    else second_label_left = std::min(second_label_left, q.min.x);
  }
  CHECK(first_label_right > samples[0].max.x);
  CHECK(samples[1].min.x > first_label_right);
  CHECK(second_label_left > samples[1].max.x);
}

TEST_CASE("plot: a ring sample in a legend row is an open circle centred in the sample's place") {
  const LegendEntry ring[] = {{"track points", IM_COL32(255, 225, 0, 255), false, true}};
  const ImVec2 at(20.0f, 40.0f);
  float line = 0.0f;
  const Framebuffer picture = draw_headless(200, 100, [&] {
    line = ImGui::GetFontSize();
    draw_legend_row(*ImGui::GetBackgroundDrawList(), at, ring);
  });
  // Centred in the sample's place (two text lines wide, middle of the line), radius 0.3 line:
  // the ring's colour on the circle, the background at its centre.
  const float cx = at.x + line, cy = std::floor(at.y + line / 2), r = 0.3f * line;
  const auto yellow = [&](int x, int y) {  // the ring's colour, at least half covering the pixel
    const std::uint32_t p = picture.at(x, y);
    return (p & 0xFF) > 130 && ((p >> 8) & 0xFF) > 120 && ((p >> 16) & 0xFF) < 60;
  };
  int on_circle = 0;
  for (int k = 0; k < 16; ++k) {
    const double a = k * 2.0 * 3.141592653589793 / 16;
    const int x = int(std::floor(cx + r * std::cos(a))), y = int(std::floor(cy + r * std::sin(a)));
    bool near = false;
    for (int dy = -1; dy <= 1; ++dy)
      for (int dx = -1; dx <= 1; ++dx) near = near || yellow(x + dx, y + dy);
    on_circle += near;
  }
  write_png(picture, test::scratch_dir("plot-legend-ring") / "ring.png");
  CHECK(on_circle == 16);
  CHECK(picture.at(int(cx), int(cy)) == HeadlessOptions{}.background);
  CHECK_FALSE(yellow(int(cx + 2.0f * r), int(cy)));
}

}  // namespace occulta::viewer
