// viewer/raster.cpp — see raster.hpp for the conventions. The file reads top-down: pixel
// arithmetic, texture sampling, the rectangle path, the general triangle path, render().
#include "viewer/raster.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <stdexcept>

namespace occulta::viewer {
namespace {

// ---- pixel arithmetic: 8-bit channels, four 16-bit lanes in a uint64 ------------------

constexpr std::uint64_t kLanes = 0x00FF00FF00FF00FFull;

std::uint32_t load(const std::uint8_t* p) {
  std::uint32_t v;
  std::memcpy(&v, p, 4);
  return v;
}

std::uint64_t spread(std::uint32_t c) {
  std::uint64_t e = c;
  e = (e | (e << 16)) & 0x0000FFFF0000FFFFull;
  return (e | (e << 8)) & kLanes;
}

std::uint32_t gather(std::uint64_t e) {
  e &= kLanes;
  e = (e | (e >> 8)) & 0x0000FFFF0000FFFFull;
  return std::uint32_t(e | (e >> 16));
}

// x/255 rounded to nearest in each lane, exact for 0 ≤ x ≤ 255·255: the
// "(x + 128 + ((x + 128) >> 8)) >> 8" of Blinn (1995, "Three wrongs make a right",
// IEEE CG&A 15(6)); tests/viewer checks it over the whole range.
std::uint64_t div255_lanes(std::uint64_t x) {
  x += 0x0080008000800080ull;
  return ((x + ((x >> 8) & kLanes)) >> 8) & kLanes;
}

// Source over (raster.hpp): rgb = s·a + d·(1 − a), alpha = a + d.a·(1 − a), in 8 bits.
// Setting the source's alpha byte to 255 makes the one lane formula give Porter–Duff's alpha.
std::uint32_t over(std::uint32_t src, std::uint32_t dst) {
  const std::uint32_t a = src >> 24;
  if (a == 255) return src;
  if (a == 0) return dst;
  const std::uint64_t mixed = spread(src | 0xFF000000u) * a + spread(dst) * (255 - a);
  return gather(div255_lanes(mixed));
}

// Texel × vertex colour per channel (GL_MODULATE), each product /255 rounded.
std::uint32_t modulate(std::uint32_t texel, std::uint32_t colour) {
  if (colour == 0xFFFFFFFFu) return texel;
  if (texel == 0xFFFFFFFFu) return colour;
  const std::uint64_t t = spread(texel), c = spread(colour);
  std::uint64_t product = 0;
  for (int shift = 0; shift < 64; shift += 16) product |= (((t >> shift) & 0xFF) * ((c >> shift) & 0xFF)) << shift;
  return gather(div255_lanes(product));
}

// a·(256 − w) + b·w over 256 in each lane, rounded; w in [0, 256].
std::uint64_t lerp_lanes(std::uint64_t a, std::uint64_t b, std::uint32_t w) {
  return ((a * (256 - w) + b * w + 0x0080008000800080ull) >> 8) & kLanes;
}

// ---- texture sampling ------------------------------------------------------------------

// Along one texture axis: the two texels a sample reads and the weight (0–256) of the second.
struct Tap {
  int first = 0;
  int second = 0;
  std::uint32_t weight = 0;
};

int wrapped(long i, int n, Wrap wrap) {
  if (wrap == Wrap::repeat) return int(((i % n) + n) % n);
  return int(std::clamp<long>(i, 0, n - 1));
}

// coordinate in texels (u·W); texel i's centre is at i + ½ (raster.hpp).
Tap tap(double coordinate, int n, Sampling sampling, Wrap wrap) {
  if (std::isnan(coordinate)) coordinate = 0;
  coordinate = std::clamp(coordinate, -1e9, 1e9);  // keeps the integer conversion defined
  if (sampling == Sampling::nearest) {
    const int i = wrapped(long(std::floor(coordinate)), n, wrap);
    return {i, i, 0};
  }
  const double s = coordinate - 0.5;
  const double whole = std::floor(s);
  long i = long(whole);
  auto weight = std::uint32_t((s - whole) * 256.0 + 0.5);  // rounded: the fraction is ≥ 0
  if (weight == 256) {
    ++i;
    weight = 0;
  }
  return {wrapped(i, n, wrap), wrapped(i + 1, n, wrap), weight};
}

// Bilinear (or nearest: zero weights) from the two texel rows a sample reads. Inlined
// into the pixel loops: a call per pixel cost a fifth of an image's time.
[[gnu::always_inline]] inline std::uint32_t sample_rows(const std::uint8_t* first, const std::uint8_t* second, const Tap& x, std::uint32_t y_weight) {
  const std::uint32_t t00 = load(first + 4 * std::size_t(x.first));
  if (x.weight == 0 && y_weight == 0) return t00;
  const std::uint64_t top = lerp_lanes(spread(t00), spread(load(first + 4 * std::size_t(x.second))), x.weight);
  const std::uint64_t bottom = lerp_lanes(spread(load(second + 4 * std::size_t(x.first))), spread(load(second + 4 * std::size_t(x.second))), x.weight);
  return gather(lerp_lanes(top, bottom, y_weight));
}

const std::uint8_t* texel_row(const Texture& t, int j) { return t.texels + 4 * std::size_t(j) * std::size_t(t.width); }

std::uint32_t sample_uv(const Texture& t, double u, double v) {
  const Tap x = tap(u * t.width, t.width, t.sampling, t.wrap), y = tap(v * t.height, t.height, t.sampling, t.wrap);
  return sample_rows(texel_row(t, y.first), texel_row(t, y.second), x, y.weight);
}

// ---- geometry in fixed point -----------------------------------------------------------

constexpr int kSubBits = 8;                    // 1/256 px, as llvmpipe
constexpr std::int64_t kOne = 1 << kSubBits;   // one pixel in sub-pixel units
constexpr std::int64_t kHalf = kOne / 2;       // a pixel centre's offset
constexpr double kMaxPx = double(1 << 20);

std::int64_t snap(double px) {
  if (std::isnan(px)) px = 0;  // a broken vertex must not make the integer arithmetic overflow
  return std::llround(std::clamp(px, -kMaxPx, kMaxPx) * double(kOne));
}

std::int64_t floor_div(std::int64_t a, std::int64_t b) {  // b > 0
  return a >= 0 ? a / b : -((-a + b - 1) / b);
}
std::int64_t ceil_div(std::int64_t a, std::int64_t b) { return -floor_div(-a, b); }

// First and last pixel index whose centre c·256 + 128 satisfies lo ≤ centre < hi.
std::int64_t first_centre_at_or_after(std::int64_t lo) { return ceil_div(lo - kHalf, kOne); }
std::int64_t last_centre_before(std::int64_t hi) { return ceil_div(hi - kHalf, kOne) - 1; }

struct Box {  // pixels [x0, x1) × [y0, y1)
  int x0 = 0, y0 = 0, x1 = 0, y1 = 0;
  bool empty() const { return x1 <= x0 || y1 <= y0; }
};

struct Vertex {  // in framebuffer pixels
  std::int64_t X = 0, Y = 0;  // snapped, sub-pixel units
  double u = 0, v = 0;
  std::uint32_t colour = 0;
};

struct Target {
  Framebuffer& fb;
  std::vector<Tap> column_taps;  // scratch of the rectangle path
  std::vector<Tap> row_taps;
  RasterCounts counts;
};

std::uint32_t* row_of(Framebuffer& fb, int y) { return fb.pixels.data() + std::size_t(y) * std::size_t(fb.width); }

void fill_span(std::uint32_t* row, int x0, int x1, std::uint32_t fragment) {
  const std::uint32_t a = fragment >> 24;
  if (a == 255) {
    std::fill(row + x0, row + x1, fragment);
  } else if (a != 0) {
    // A translucent fill (a window's background) mostly lies over runs of one colour:
    // blend once per run. The result is the same as blending every pixel.
    const std::uint64_t source = spread(fragment | 0xFF000000u) * a;
    std::uint32_t before = ~row[x0], after = 0;
    for (int x = x0; x < x1; ++x) {
      if (row[x] != before) {
        before = row[x];
        after = gather(div255_lanes(source + spread(before) * (255 - a)));
      }
      row[x] = after;
    }
  }
}

// ---- the rectangle path ----------------------------------------------------------------

// An axis-aligned quad: corners a (x_a, y_a) and c (x_c, y_c) opposite, u linear in x from
// u_a to u_c, v linear in y, one colour. Covers the centres with min x ≤ x < max x and
// min y < y ≤ max y — what the top-left rule (raster.hpp) gives its two triangles together.
struct Rect {
  Vertex a, c;
};

void draw_rect(Target& target, const Rect& r, const Texture& texture, const Box& clip) {
  if (r.a.X == r.c.X || r.a.Y == r.c.Y) return;
  ++target.counts.rectangles;
  const Box cover{
      int(std::max<std::int64_t>(clip.x0, first_centre_at_or_after(std::min(r.a.X, r.c.X)))),
      int(std::max<std::int64_t>(clip.y0, first_centre_at_or_after(std::min(r.a.Y, r.c.Y) + 1))),
      int(std::min<std::int64_t>(clip.x1, last_centre_before(std::max(r.a.X, r.c.X)) + 1)),
      int(std::min<std::int64_t>(clip.y1, last_centre_before(std::max(r.a.Y, r.c.Y) + 1) + 1))};
  if (cover.empty()) return;
  const std::uint32_t colour = r.a.colour;

  if (r.a.u == r.c.u && r.a.v == r.c.v) {  // one texel: a solid rectangle
    const std::uint32_t fragment = modulate(sample_uv(texture, r.a.u, r.a.v), colour);
    for (int y = cover.y0; y < cover.y1; ++y) fill_span(row_of(target.fb, y), cover.x0, cover.x1, fragment);
    return;
  }

  // u depends on x only and v on y only: one tap per column and one per row.
  const double xa = double(r.a.X) / kOne, ya = double(r.a.Y) / kOne;
  const double du_dx = (r.c.u - r.a.u) / (double(r.c.X - r.a.X) / kOne);
  const double dv_dy = (r.c.v - r.a.v) / (double(r.c.Y - r.a.Y) / kOne);
  target.column_taps.resize(std::size_t(cover.x1 - cover.x0));
  for (int x = cover.x0; x < cover.x1; ++x) {
    const double u = r.a.u + (x + 0.5 - xa) * du_dx;
    target.column_taps[std::size_t(x - cover.x0)] = tap(u * texture.width, texture.width, texture.sampling, texture.wrap);
  }
  target.row_taps.resize(std::size_t(cover.y1 - cover.y0));
  for (int y = cover.y0; y < cover.y1; ++y) {
    const double v = r.a.v + (y + 0.5 - ya) * dv_dy;
    target.row_taps[std::size_t(y - cover.y0)] = tap(v * texture.height, texture.height, texture.sampling, texture.wrap);
  }
  const Tap* tx = target.column_taps.data();  // tx[x - cover.x0] is column x's tap
  for (int y = cover.y0; y < cover.y1; ++y) {
    std::uint32_t* row = row_of(target.fb, y);
    const Tap& ty = target.row_taps[std::size_t(y - cover.y0)];
    const std::uint8_t *first = texel_row(texture, ty.first), *second = texel_row(texture, ty.second);
    if (colour == 0xFFFFFFFFu) {  // an image as it is: no modulation, often opaque
      for (int x = cover.x0; x < cover.x1; ++x) row[x] = over(sample_rows(first, second, tx[x - cover.x0], ty.weight), row[x]);
    } else {
      for (int x = cover.x0; x < cover.x1; ++x) row[x] = over(modulate(sample_rows(first, second, tx[x - cover.x0], ty.weight), colour), row[x]);
    }
  }
}

// ---- the general triangle path ---------------------------------------------------------

// An attribute as a plane over the framebuffer: value(x, y) = at_origin + d_dx·x + d_dy·y.
struct Plane {
  double at_origin = 0, d_dx = 0, d_dy = 0;
  double at(double x, double y) const { return at_origin + d_dx * x + d_dy * y; }
};

Plane plane(const Vertex (&p)[3], const double (&value)[3]) {
  const double x0 = double(p[0].X) / kOne, y0 = double(p[0].Y) / kOne;
  const double x1 = double(p[1].X) / kOne - x0, y1 = double(p[1].Y) / kOne - y0;
  const double x2 = double(p[2].X) / kOne - x0, y2 = double(p[2].Y) / kOne - y0;
  const double det = x1 * y2 - x2 * y1;
  const double a1 = value[1] - value[0], a2 = value[2] - value[0];
  Plane q;
  q.d_dx = (a1 * y2 - a2 * y1) / det;
  q.d_dy = (a2 * x1 - a1 * x2) / det;
  q.at_origin = value[0] - q.d_dx * x0 - q.d_dy * y0;
  return q;
}

// Edge a→b of a triangle whose interior is on its positive side:
//   E(P) = (b.x − a.x)(P.y − a.y) − (b.y − a.y)(P.x − a.x)   (Pineda 1988), in sub-pixels².
// The top-left rule as OpenGL applies it, with y up (raster.hpp): a left edge has the
// interior at larger x (dy < 0); a top edge — with y up — is horizontal with the interior
// on its y-up side, i.e. at smaller row y here (dy = 0, dx < 0). Centres exactly on those
// edges are in, on the others out — so E ≥ 0 there and E ≥ 1 elsewhere.
struct Edge {
  std::int64_t dx = 0, dy = 0, ax = 0, ay = 0, threshold = 0;
};

Edge edge(const Vertex& a, const Vertex& b) {
  Edge e{b.X - a.X, b.Y - a.Y, a.X, a.Y, 0};
  const bool top_left = e.dy < 0 || (e.dy == 0 && e.dx < 0);
  e.threshold = top_left ? 0 : 1;
  return e;
}

// Narrows [x0, x1] on the row whose centres are at cy to where E ≥ threshold.
void narrow(const Edge& e, std::int64_t cy, std::int64_t& x0, std::int64_t& x1) {
  // E(x) = k − dy·(256·x + 128) with k = dx·(cy − a.y) + dy·a.x.
  const std::int64_t k = e.dx * (cy - e.ay) + e.dy * e.ax;
  if (e.dy < 0) {
    const std::int64_t g = -e.dy;
    x0 = std::max(x0, ceil_div(e.threshold - k - kHalf * g, kOne * g));
  } else if (e.dy > 0) {
    x1 = std::min(x1, floor_div(k - e.threshold - kHalf * e.dy, kOne * e.dy));
  } else if (k < e.threshold) {
    x1 = x0 - 1;
  }
}

std::uint32_t colour_at(const Plane (&c)[4], double x, double y) {
  std::uint32_t out = 0;
  for (int i = 0; i < 4; ++i) {
    const auto channel = std::uint32_t(std::clamp(std::lround(c[i].at(x, y)), 0L, 255L));
    out |= channel << (8 * i);
  }
  return out;
}

void draw_triangle(Target& target, Vertex p0, Vertex p1, Vertex p2, const Texture& texture, const Box& clip) {
  std::int64_t area2 = (p1.X - p0.X) * (p2.Y - p0.Y) - (p1.Y - p0.Y) * (p2.X - p0.X);
  if (area2 == 0) return;
  if (area2 < 0) std::swap(p1, p2);  // Dear ImGui emits both windings and culls none
  ++target.counts.triangles;
  const Vertex p[3] = {p0, p1, p2};
  const Edge edges[3] = {edge(p1, p2), edge(p2, p0), edge(p0, p1)};

  const std::int64_t min_y = std::min({p0.Y, p1.Y, p2.Y}), max_y = std::max({p0.Y, p1.Y, p2.Y});
  const std::int64_t min_x = std::min({p0.X, p1.X, p2.X}), max_x = std::max({p0.X, p1.X, p2.X});
  const int y_first = int(std::max<std::int64_t>(clip.y0, first_centre_at_or_after(min_y)));
  const int y_last = int(std::min<std::int64_t>(clip.y1 - 1, floor_div(max_y - kHalf, kOne)));
  const std::int64_t x_first = std::max<std::int64_t>(clip.x0, first_centre_at_or_after(min_x));
  const std::int64_t x_last = std::min<std::int64_t>(clip.x1 - 1, floor_div(max_x - kHalf, kOne));

  const bool one_uv = p0.u == p1.u && p0.u == p2.u && p0.v == p1.v && p0.v == p2.v;
  const bool one_colour = p0.colour == p1.colour && p0.colour == p2.colour;
  const std::uint32_t texel_const = one_uv ? sample_uv(texture, p0.u, p0.v) : 0;
  Plane u, v, channel[4];
  if (!one_uv) {
    u = plane(p, {p0.u, p1.u, p2.u});
    v = plane(p, {p0.v, p1.v, p2.v});
  }
  if (!one_colour) {
    for (int i = 0; i < 4; ++i) {
      const auto byte = [&](const Vertex& q) { return double((q.colour >> (8 * i)) & 0xFF); };
      channel[i] = plane(p, {byte(p0), byte(p1), byte(p2)});
    }
  }

  for (int y = y_first; y <= y_last; ++y) {
    std::int64_t x0 = x_first, x1 = x_last;
    const std::int64_t cy = std::int64_t(y) * kOne + kHalf;
    for (const Edge& e : edges) narrow(e, cy, x0, x1);
    if (x1 < x0) continue;
    std::uint32_t* row = row_of(target.fb, y);
    const double yc = y + 0.5;
    if (one_uv && one_colour) {
      fill_span(row, int(x0), int(x1) + 1, modulate(texel_const, p0.colour));
      continue;
    }
    for (auto x = int(x0); x <= int(x1); ++x) {
      const double xc = x + 0.5;
      const std::uint32_t t = one_uv ? texel_const : sample_uv(texture, u.at(xc, yc), v.at(xc, yc));
      const std::uint32_t c = one_colour ? p0.colour : colour_at(channel, xc, yc);
      row[x] = over(modulate(t, c), row[x]);
    }
  }
}

// ---- draw data -------------------------------------------------------------------------

// Two triangles (a, b, c), (a, c, d) forming an axis-aligned rectangle a b c d with u
// along x, v along y and one colour — the pattern of PrimRect, PrimRectUV and RenderText.
bool is_rect(const ImDrawIdx* idx, const ImDrawVert* vtx) {
  if (idx[3] != idx[0] || idx[4] != idx[2]) return false;
  const ImDrawVert &a = vtx[idx[0]], &b = vtx[idx[1]], &c = vtx[idx[2]], &d = vtx[idx[5]];
  return a.pos.y == b.pos.y && b.pos.x == c.pos.x && c.pos.y == d.pos.y && d.pos.x == a.pos.x &&
         a.uv.y == b.uv.y && b.uv.x == c.uv.x && c.uv.y == d.uv.y && d.uv.x == a.uv.x &&
         a.col == b.col && a.col == c.col && a.col == d.col;
}

const Texture& find_texture(std::span<const Texture> textures, ImTextureID id) {
  for (const Texture& t : textures) {
    if (t.id != id) continue;
    if (t.texels == nullptr || t.width <= 0 || t.height <= 0)
      throw std::invalid_argument("viewer::render: a texture in the table has no texels or no size");
    return t;
  }
  throw std::invalid_argument("viewer::render: a draw command uses a texture id that is not in the texture table");
}

}  // namespace

RasterCounts render(const ImDrawData& draw_data, std::span<const Texture> textures, Framebuffer& framebuffer) {
  Target target{framebuffer, {}, {}, {}};
  const ImVec2 origin = draw_data.DisplayPos, scale = draw_data.FramebufferScale;
  const auto to_int = [](double value) { return int(std::clamp(value, -1e9, 1e9)); };  // C++ truncation, as (int) in the backend
  const int display_height = to_int(double(draw_data.DisplaySize.y) * scale.y);
  const Box whole{0, 0, framebuffer.width, framebuffer.height};

  for (int n = 0; n < draw_data.CmdListsCount; ++n) {
    const ImDrawList& list = *draw_data.CmdLists[n];
    for (const ImDrawCmd& cmd : list.CmdBuffer) {
      if (cmd.UserCallback != nullptr) {
        if (cmd.UserCallback != ImDrawCallback_ResetRenderState) cmd.UserCallback(&list, &cmd);
        continue;
      }
      // The clip box as imgui_impl_opengl2.cpp computes its glScissor (x, y from the
      // bottom, width, height, each truncated), turned back to rows from the top.
      const double min_x = (double(cmd.ClipRect.x) - origin.x) * scale.x, min_y = (double(cmd.ClipRect.y) - origin.y) * scale.y;
      const double max_x = (double(cmd.ClipRect.z) - origin.x) * scale.x, max_y = (double(cmd.ClipRect.w) - origin.y) * scale.y;
      if (max_x <= min_x || max_y <= min_y) {
        ++target.counts.skipped_commands;
        continue;
      }
      const int gl_x = to_int(min_x), gl_y = to_int(display_height - max_y);
      const int gl_w = to_int(max_x - min_x), gl_h = to_int(max_y - min_y);
      Box clip{gl_x, display_height - gl_y - gl_h, gl_x + gl_w, display_height - gl_y};
      clip = {std::max(clip.x0, whole.x0), std::max(clip.y0, whole.y0), std::min(clip.x1, whole.x1), std::min(clip.y1, whole.y1)};
      if (clip.empty()) {
        ++target.counts.skipped_commands;
        continue;
      }

      const Texture& texture = find_texture(textures, cmd.TextureId);
      const ImDrawIdx* idx = list.IdxBuffer.Data + cmd.IdxOffset;
      const ImDrawVert* vtx = list.VtxBuffer.Data + cmd.VtxOffset;
      const auto vertex = [&](ImDrawIdx i) {
        const ImDrawVert& w = vtx[i];
        return Vertex{snap((double(w.pos.x) - origin.x) * scale.x), snap((double(w.pos.y) - origin.y) * scale.y),
                      double(w.uv.x), double(w.uv.y), w.col};
      };
      for (unsigned int i = 0; i + 3 <= cmd.ElemCount;) {
        if (i + 6 <= cmd.ElemCount && is_rect(idx + i, vtx)) {
          draw_rect(target, Rect{vertex(idx[i]), vertex(idx[i + 2])}, texture, clip);
          i += 6;
        } else {
          draw_triangle(target, vertex(idx[i]), vertex(idx[i + 1]), vertex(idx[i + 2]), texture, clip);
          i += 3;
        }
      }
    }
  }
  return target.counts;
}

}  // namespace occulta::viewer
