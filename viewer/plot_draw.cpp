// viewer/plot_draw.cpp — the plotting layer's drawing on an ImDrawList (plot.hpp).
#include <algorithm>
#include <cfloat>
#include <cmath>
#include <numbers>
#include <utility>
#include <vector>

#include "viewer/plot.hpp"

namespace occulta::viewer {

namespace {

float line_px() { return ImGui::GetFontSize(); }

ImVec2 text_size(std::string_view s) {
  return ImGui::GetFont()->CalcTextSizeA(ImGui::GetFontSize(), FLT_MAX, 0.0f, s.data(), s.data() + s.size());
}

// Text with its top-left corner at `at`, on a whole pixel.
void text(ImDrawList& draw, ImVec2 at, ImU32 colour, std::string_view s) {
  draw.AddText(ImGui::GetFont(), ImGui::GetFontSize(), ImVec2(std::floor(at.x), std::floor(at.y)), colour, s.data(),
               s.data() + s.size());
}

// Text turned a quarter turn anticlockwise (reading upwards) about `centre`. Dear ImGui
// culls glyphs against the clip rectangle before we can turn them, so the text is laid out
// level at the clip rectangle's top-left corner u (where it is not culled), then each new
// vertex (x, y) goes to (cx + (y − uy), cy − (x − ux)), u and c being the level and the
// turned text's centres.
void text_upwards(ImDrawList& draw, ImVec2 centre, ImU32 colour, std::string_view s) {
  const ImVec2 size = text_size(s);
  const ImVec2 c(std::floor(centre.x), std::floor(centre.y));
  const ImVec2 corner = draw.GetClipRectMin();
  const ImVec2 level(std::floor(corner.x), std::floor(corner.y));
  const ImVec2 u(level.x + std::floor(size.x / 2), level.y + std::floor(size.y / 2));
  const int first = draw.VtxBuffer.Size;
  text(draw, level, colour, s);
  for (int i = first; i < draw.VtxBuffer.Size; ++i) {
    ImVec2& p = draw.VtxBuffer[i].pos;
    p = ImVec2(c.x + (p.y - u.y), c.y - (p.x - u.x));
  }
}

// A filled rectangle on whole pixels: columns [x0, x1), rows [y0, y1).
void pixels(ImDrawList& draw, float x0, float y0, float x1, float y1, ImU32 colour) {
  draw.AddRectFilled(ImVec2(x0, y0), ImVec2(x1, y1), colour);
}

// A one-pixel outline just outside the pixel rectangle [min, max).
void outline(ImDrawList& draw, ImVec2 min, ImVec2 max, ImU32 colour) {
  pixels(draw, min.x - 1, min.y - 1, max.x + 1, min.y, colour);
  pixels(draw, min.x - 1, max.y, max.x + 1, max.y + 1, colour);
  pixels(draw, min.x - 1, min.y, min.x, max.y, colour);
  pixels(draw, max.x, min.y, max.x + 1, max.y, colour);
}

float widest(const std::vector<Tick>& ticks) {
  float w = 0.0f;
  for (const Tick& t : ticks) w = std::max(w, text_size(t.label).x);
  return w;
}

bool has_dates(const std::vector<Tick>& ticks) {
  return std::any_of(ticks.begin(), ticks.end(), [](const Tick& t) { return !t.date.empty(); });
}

// The pixel column (or row) a data position falls in, kept inside [lo, hi).
float column(float p, float lo, float hi) { return std::clamp(std::floor(p), lo, hi - 1.0f); }

// The colour bar's strip, left of its ticks.
float colour_bar_x0(const PlotFrame& frame, const PlotStyle& style) {
  return frame.pixel_max.x + 1.0f + 3.0f * style.pad_px;
}

// The colour bar's values placed along the data area's height.
PlotFrame colour_bar_frame(const PlotFrame& frame, const ColourScale& scale, const PlotStyle& style) {
  const float x0 = colour_bar_x0(frame, style);
  return {ImVec2(x0, frame.pixel_min.y), ImVec2(x0 + style.colour_bar_px, frame.pixel_max.y), Axis{0.0, 1.0, {}, false},
          Axis{scale.lo, scale.hi, scale.label, false}};
}

}  // namespace

PlotFrame layout_plot(ImVec2 outer_min, ImVec2 outer_max, Axis x, Axis y, const PlotMargins& margins,
                      const PlotStyle& style) {
  const float line = line_px(), pad = style.pad_px;
  const float top = margins.title || margins.colour_bar ? line + 2.0f * pad + 1.0f : std::ceil(line / 2.0f) + pad;
  // The margins depend on one another (the left one on the y labels, so on the height; the
  // bottom one on whether the x ticks carry dates, so on the width): laid out with a date
  // row first, and again without it when the x ticks turn out to have no dates.
  PlotFrame frame;
  bool date_row = x.utc;
  for (int pass = 0; pass < 2; ++pass) {
    const float bottom = 1.0f + style.tick_px + pad + line + (date_row ? line : 0.0f) + pad +
                         (x.label.empty() ? 0.0f : line + pad);
    const float height = outer_max.y - outer_min.y - top - bottom;
    const float y_labels = widest(axis_ticks(y, height, style.y_spacing_px));
    const float left = pad + (y.label.empty() ? 0.0f : line + pad) + y_labels + pad + style.tick_px + 1.0f;
    // Room for half the last x tick label, which is centred on its tick.
    float right = std::max(pad, text_size(x.utc ? "0000-00-00" : "0000.0").x / 2.0f);
    if (margins.colour_bar && margins.colour_scale != nullptr) {
      const std::vector<Tick> ticks = axis_ticks(Axis{margins.colour_scale->lo, margins.colour_scale->hi, {}, false},
                                                 height, style.y_spacing_px);
      right = 1.0f + 3.0f * pad + style.colour_bar_px + 1.0f + style.tick_px + pad +
              std::max(widest(ticks), text_size(margins.colour_scale->label).x - style.colour_bar_px) + pad;
    }
    frame.pixel_min = ImVec2(std::floor(outer_min.x + left), std::floor(outer_min.y + top));
    frame.pixel_max = ImVec2(std::floor(outer_max.x - right), std::floor(outer_max.y - bottom));
    if (!date_row || has_dates(axis_ticks(x, frame.pixel_max.x - frame.pixel_min.x, style.x_spacing_px))) break;
    date_row = false;
  }
  frame.x = std::move(x);
  frame.y = std::move(y);
  return frame;
}

PlotFrame with_equal_scale(const PlotFrame& frame) {
  const double width = frame.pixel_max.x - frame.pixel_min.x, height = frame.pixel_max.y - frame.pixel_min.y;
  const double per_unit = std::min(width / std::abs(frame.x.hi - frame.x.lo), height / std::abs(frame.y.hi - frame.y.lo));
  const float w = static_cast<float>(std::floor(per_unit * std::abs(frame.x.hi - frame.x.lo)));
  const float h = static_cast<float>(std::floor(per_unit * std::abs(frame.y.hi - frame.y.lo)));
  PlotFrame out = frame;
  out.pixel_min = ImVec2(std::floor(frame.pixel_min.x + (static_cast<float>(width) - w) / 2),
                         std::floor(frame.pixel_min.y + (static_cast<float>(height) - h) / 2));
  out.pixel_max = ImVec2(out.pixel_min.x + w, out.pixel_min.y + h);
  return out;
}

AxesDrawn draw_axes(ImDrawList& draw, const PlotFrame& frame, const PlotStyle& style) {
  const ImVec2 lo = frame.pixel_min, hi = frame.pixel_max;
  const float line = line_px(), pad = style.pad_px;
  AxesDrawn drawn;
  drawn.x_ticks = axis_ticks(frame.x, hi.x - lo.x, style.x_spacing_px);
  drawn.y_ticks = axis_ticks(frame.y, hi.y - lo.y, style.y_spacing_px);

  if ((style.grid & IM_COL32_A_MASK) != 0) {
    for (const Tick& t : drawn.x_ticks) {
      const float px = column(frame.to_pixel(t.value, frame.y.lo).x, lo.x, hi.x);
      pixels(draw, px, lo.y, px + 1, hi.y, style.grid);
    }
    for (const Tick& t : drawn.y_ticks) {
      const float py = column(frame.to_pixel(frame.x.lo, t.value).y, lo.y, hi.y);
      pixels(draw, lo.x, py, hi.x, py + 1, style.grid);
    }
  }
  outline(draw, lo, hi, style.axis);

  // x: ticks down from the bottom edge, labels centred under them, a time axis' dates below.
  const float label_y = hi.y + 1.0f + style.tick_px + pad;
  for (const Tick& t : drawn.x_ticks) {
    const float px = column(frame.to_pixel(t.value, frame.y.lo).x, lo.x, hi.x);
    pixels(draw, px, hi.y + 1, px + 1, hi.y + 1 + style.tick_px, style.axis);
    text(draw, ImVec2(px + 0.5f - text_size(t.label).x / 2, label_y), style.text, t.label);
    if (!t.date.empty()) text(draw, ImVec2(px + 0.5f - text_size(t.date).x / 2, label_y + line), style.text, t.date);
  }
  if (!frame.x.label.empty()) {
    const float y = label_y + line * (has_dates(drawn.x_ticks) ? 2.0f : 1.0f) + pad;
    text(draw, ImVec2((lo.x + hi.x - text_size(frame.x.label).x) / 2, y), style.text, frame.x.label);
  }

  // y: ticks left of the left edge, labels right-aligned beside them, the axis label upright.
  const float tick_x = lo.x - 1.0f - style.tick_px;
  for (const Tick& t : drawn.y_ticks) {
    const float py = column(frame.to_pixel(frame.x.lo, t.value).y, lo.y, hi.y);
    pixels(draw, tick_x, py, lo.x - 1, py + 1, style.axis);
    text(draw, ImVec2(tick_x - pad - text_size(t.label).x, py + 0.5f - line / 2), style.text, t.label);
  }
  if (!frame.y.label.empty()) {
    const float x = tick_x - pad - widest(drawn.y_ticks) - pad - line / 2;
    text_upwards(draw, ImVec2(x, (lo.y + hi.y) / 2), style.text, frame.y.label);
  }
  return drawn;
}

void draw_title(ImDrawList& draw, const PlotFrame& frame, std::string_view title, const PlotStyle& style) {
  const float x = (frame.pixel_min.x + frame.pixel_max.x - text_size(title).x) / 2;
  text(draw, ImVec2(std::max(x, frame.pixel_min.x), frame.pixel_min.y - 1.0f - style.pad_px - line_px()), style.text,
       title);
}

void draw_legend(ImDrawList& draw, const PlotFrame& frame, std::span<const LegendEntry> entries, int rows_above,
                 const PlotStyle& style) {
  if (entries.empty()) return;
  const float line = line_px(), pad = style.pad_px, sample = 2.0f * line;
  float label_w = 0.0f;
  for (const LegendEntry& e : entries) label_w = std::max(label_w, text_size(e.label).x);
  const float w = std::ceil(pad + sample + pad + label_w + pad);
  const float h = std::ceil(pad + entries.size() * line + pad);
  const ImVec2 box_min(frame.pixel_max.x - pad - w, frame.pixel_min.y + pad + rows_above * line);
  const ImVec2 box_max(box_min.x + w, box_min.y + h);
  draw.AddRectFilled(box_min, box_max, (style.background & ~IM_COL32_A_MASK) | IM_COL32(0, 0, 0, 220));
  outline(draw, box_min, box_max, style.axis);
  float y = box_min.y + pad;
  for (const LegendEntry& e : entries) {
    const float mid = std::floor(y + line / 2);
    if (e.ring) {
      draw.AddCircle(ImVec2(box_min.x + pad + sample / 2, mid), line * 0.3f, e.colour, 16, 2.0f);
    } else if (e.box) {
      const float side = std::floor(line * 0.6f);
      pixels(draw, box_min.x + pad + (sample - side) / 2, mid - side / 2, box_min.x + pad + (sample + side) / 2,
             mid + side / 2, e.colour);
    } else {
      pixels(draw, box_min.x + pad, mid - 1, box_min.x + pad + sample, mid + 1, e.colour);
    }
    text(draw, ImVec2(box_min.x + pad + sample + pad, y), style.text, e.label);
    y += line;
  }
}

float draw_legend_row(ImDrawList& draw, ImVec2 at, std::span<const LegendEntry> entries, const PlotStyle& style) {
  const float line = line_px(), pad = style.pad_px, sample = 2.0f * line;
  const float mid = std::floor(at.y + line / 2);
  float x = std::floor(at.x);
  for (const LegendEntry& e : entries) {
    if (e.ring) {
      draw.AddCircle(ImVec2(x + sample / 2, mid), line * 0.3f, e.colour, 16, 2.0f);
    } else if (e.box) {
      const float side = std::floor(line * 0.6f);
      pixels(draw, x + (sample - side) / 2, mid - side / 2, x + (sample + side) / 2, mid + side / 2, e.colour);
    } else {
      pixels(draw, x, mid - 1, x + sample, mid + 1, e.colour);
    }
    text(draw, ImVec2(x + sample + pad, at.y), style.text, e.label);
    x += std::ceil(sample + pad + text_size(e.label).x + 3.0f * pad);
  }
  return x - std::floor(at.x);
}

void draw_line(ImDrawList& draw, const PlotFrame& frame, std::span<const DataPoint> points, ImU32 colour,
               float thickness_px) {
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  ImVector<ImVec2> run;
  const auto flush = [&] {
    if (run.Size >= 2) draw.AddPolyline(run.Data, run.Size, colour, ImDrawFlags_None, thickness_px);
    run.resize(0);
  };
  for (const DataPoint& p : points) {
    if (std::isnan(p.x) || std::isnan(p.y)) {
      flush();
      continue;
    }
    run.push_back(frame.to_pixel(p.x, p.y));
  }
  flush();
  draw.PopClipRect();
}

void draw_bars(ImDrawList& draw, const PlotFrame& frame, std::span<const double> edges,
               std::span<const double> heights, ImU32 colour) {
  IM_ASSERT(edges.size() == heights.size() + 1);
  const double base = std::clamp(0.0, std::min(frame.y.lo, frame.y.hi), std::max(frame.y.lo, frame.y.hi));
  const float base_py = std::round(frame.to_pixel(frame.x.lo, base).y);
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  for (std::size_t i = 0; i < heights.size(); ++i) {
    if (!std::isfinite(heights[i]) || heights[i] == base) continue;
    float x0 = std::round(frame.to_pixel(edges[i], base).x), x1 = std::round(frame.to_pixel(edges[i + 1], base).x);
    if (x0 > x1) std::swap(x0, x1);
    if (x1 - x0 >= 4.0f) x1 -= 1.0f;  // a gap between neighbours
    const float top = std::round(frame.to_pixel(edges[i], heights[i]).y);
    pixels(draw, x0, std::min(top, base_py), x1, std::max(top, base_py), colour);
  }
  draw.PopClipRect();
}

void draw_marker(ImDrawList& draw, const PlotFrame& frame, double x, ImU32 colour, std::string_view label,
                 int label_row, float thickness_px) {
  const float th = std::max(1.0f, std::round(thickness_px));
  const float px = std::floor(frame.to_pixel(x, frame.y.lo).x) - std::floor((th - 1.0f) / 2.0f);
  if (px + th <= frame.pixel_min.x || px >= frame.pixel_max.x) return;
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  pixels(draw, px, frame.pixel_min.y, px + th, frame.pixel_max.y, colour);
  draw.PopClipRect();
  // The label right of the line, or left of it where it would leave the data area.
  const float w = text_size(label).x, pad = 3.0f;
  const float lx = px + th + pad + w <= frame.pixel_max.x ? px + th + pad : px - pad - w;
  text(draw, ImVec2(lx, frame.pixel_min.y + pad + label_row * line_px()), colour, label);
}

void draw_circle(ImDrawList& draw, const PlotFrame& frame, double cx, double cy, double r, ImU32 colour,
                 float thickness_px) {
  // 180 chords: at 400 px of radius a chord is 14 px and strays 0.06 px from the circle
  // (r·(1 − cos(π/180))).
  constexpr int kChords = 180;
  std::vector<DataPoint> points;
  for (int i = 0; i <= kChords; ++i) {
    const double a = 2.0 * std::numbers::pi * i / kChords;
    points.push_back({cx + r * std::cos(a), cy + r * std::sin(a)});
  }
  draw_line(draw, frame, points, colour, thickness_px);
}

void draw_north_east(ImDrawList& draw, const PlotFrame& frame, const PlotStyle& style) {
  const float line = line_px(), length = 2.5f * line;
  // Screen directions of +y (north) and −x (east), from the mapping itself.
  const ImVec2 o = frame.to_pixel(frame.x.lo, frame.y.lo);
  const ImVec2 n = frame.to_pixel(frame.x.lo, frame.y.lo + std::abs(frame.y.hi - frame.y.lo) * 0.01);
  const ImVec2 e = frame.to_pixel(frame.x.lo - std::abs(frame.x.hi - frame.x.lo) * 0.01, frame.y.lo);
  const auto unit = [](ImVec2 v) {
    const float norm = std::sqrt(v.x * v.x + v.y * v.y);
    return ImVec2(v.x / norm, v.y / norm);
  };
  const ImVec2 north = unit(ImVec2(n.x - o.x, n.y - o.y)), east = unit(ImVec2(e.x - o.x, e.y - o.y));
  // The arrows' common origin sits far enough inside the corner for both to fit.
  const ImVec2 origin(frame.pixel_min.x + style.pad_px + line + length * std::max(0.0f, -std::min(north.x, east.x)),
                      frame.pixel_min.y + style.pad_px + line + length * std::max(0.0f, -std::min(north.y, east.y)));
  for (const auto& [direction, name] : {std::pair{north, "N"}, std::pair{east, "E"}}) {
    const ImVec2 tip(origin.x + direction.x * length, origin.y + direction.y * length);
    draw.AddLine(origin, tip, style.text, 1.5f);
    // The head: two strokes back from the tip at ±30°.
    for (const float side : {-1.0f, 1.0f}) {
      const float c = std::cos(0.5236f), s = side * std::sin(0.5236f);
      const ImVec2 back(-direction.x * c + direction.y * s, -direction.x * s - direction.y * c);
      draw.AddLine(tip, ImVec2(tip.x + back.x * 0.3f * line * 2, tip.y + back.y * 0.3f * line * 2), style.text, 1.5f);
    }
    const ImVec2 size = text_size(name);
    text(draw, ImVec2(tip.x + direction.x * (0.4f * line + size.x / 2) - size.x / 2,
                      tip.y + direction.y * (0.4f * line + size.y / 2) - size.y / 2),
         style.text, name);
  }
}

void draw_image(ImDrawList& draw, const PlotFrame& frame, ImTextureID texture, const ImageExtent& extent) {
  ImVec2 p0 = frame.to_pixel(extent.left, extent.top), p1 = frame.to_pixel(extent.right, extent.bottom);
  ImVec2 uv0(0.0f, 0.0f), uv1(1.0f, 1.0f);
  // A reversed axis flips the texture rather than the quad, so the quad keeps its winding.
  if (p0.x > p1.x) {
    std::swap(p0.x, p1.x);
    std::swap(uv0.x, uv1.x);
  }
  if (p0.y > p1.y) {
    std::swap(p0.y, p1.y);
    std::swap(uv0.y, uv1.y);
  }
  draw.PushClipRect(frame.pixel_min, frame.pixel_max, true);
  draw.AddImage(texture, p0, p1, uv0, uv1);
  draw.PopClipRect();
}

std::vector<Tick> draw_colour_bar(ImDrawList& draw, const PlotFrame& frame, const ColourScale& scale,
                                  const PlotStyle& style) {
  const PlotFrame bar = colour_bar_frame(frame, scale, style);
  const float x0 = bar.pixel_min.x, x1 = bar.pixel_max.x, bottom = bar.pixel_max.y;
  const float height = bar.pixel_max.y - bar.pixel_min.y;
  // One gradient quad between each pair of stops: the table is linear there, and so is a
  // quad's colour between its vertices.
  const std::span<const ColourStop> stops = colour_stops(scale.table);
  for (std::size_t i = 0; i + 1 < stops.size(); ++i) {
    const float ya = bottom - stops[i].at * height, yb = bottom - stops[i + 1].at * height;
    const ImU32 ca = colour_at(scale.table, stops[i].at), cb = colour_at(scale.table, stops[i + 1].at);
    draw.AddRectFilledMultiColor(ImVec2(x0, yb), ImVec2(x1, ya), cb, cb, ca, ca);
  }
  outline(draw, bar.pixel_min, bar.pixel_max, style.axis);
  const std::vector<Tick> ticks = axis_ticks(bar.y, height, style.y_spacing_px);
  const float line = line_px();
  for (const Tick& t : ticks) {
    const float py = column(bar.to_pixel(0.0, t.value).y, bar.pixel_min.y, bar.pixel_max.y);
    pixels(draw, x1 + 1, py, x1 + 1 + style.tick_px, py + 1, style.axis);
    text(draw, ImVec2(x1 + 1 + style.tick_px + style.pad_px, py + 0.5f - line / 2), style.text, t.label);
  }
  if (!scale.label.empty())
    text(draw, ImVec2(x0, bar.pixel_min.y - 1.0f - style.pad_px - line), style.text, scale.label);
  return ticks;
}

}  // namespace occulta::viewer
