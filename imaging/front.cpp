// imaging/front.cpp — see front.hpp for the method and its conventions.
#include "imaging/front.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <future>
#include <limits>
#include <map>
#include <numeric>
#include <thread>

#include <opencv2/imgproc.hpp>

#include "imaging/constants.hpp"
#include "imaging/difference.hpp"

namespace occulta::imaging {
namespace {

constexpr double kKmPerRs = 695700.0;  // IAU 2015 nominal solar radius (Prša et al. 2016)
constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();
// Step 6: a track point this many rows off a straight line through a front's others is
// not on that front (our choice: the track's own scatter is under a row or two).
constexpr double kOffLineRows = 3.0;

// Rows that may hold a front: between the occulter edge and the field stop, each with its
// margin. The edges are the lowest and highest rows where at least a quarter of the PAs
// have data in some frame (a missing block does not move them).
struct RowRange {
  int lo = 0, hi = -1;  // inclusive; empty when hi < lo
};

RowRange usable_rows(const PolarSequence& s, const FrontOptions& o) {
  const int rows = s.polar.height_count, cols = s.polar.pa_count;
  std::vector<int> best(rows, 0);
  for (const cv::Mat& f : s.frames)
    for (int r = 0; r < rows; ++r) {
      const float* p = f.ptr<float>(r);
      int n = 0;
      for (int c = 0; c < cols; ++c) n += std::isfinite(p[c]) ? 1 : 0;
      best[r] = std::max(best[r], n);
    }
  int first = -1, last = -1;
  for (int r = 0; r < rows; ++r)
    if (best[r] * 4 >= cols) {
      if (first < 0) first = r;
      last = r;
    }
  RowRange range;
  if (first < 0) return range;
  const double step = s.polar.height_step_rs;
  range.lo = first + int(std::ceil(o.inner_margin_rs / step - 1e-9));
  range.hi = last - int(std::ceil(o.outer_margin_rs / step - 1e-9));
  return range;
}

// Gaussian smoothing that ignores NaN (normalised convolution: blur of the values with NaN
// as 0, divided by the blur of the data mask; common practice) and wraps through north,
// then renormalised per ring so the threshold stays in σ.
cv::Mat smooth_sigma(const cv::Mat& frame, const FrontOptions& o, const PolarGrid& g) {
  const double sx = std::max(0.3, o.smooth_pa_deg / g.pa_step_deg), sy = std::max(0.3, o.smooth_rows);
  const int pad = std::min(g.pa_count, int(std::ceil(4.0 * sx)) + 1);
  cv::Mat valid = (frame == frame);  // false at NaN
  cv::Mat values = frame.clone();
  values.setTo(0.0f, ~valid);
  cv::Mat weight;
  valid.convertTo(weight, CV_32F, 1.0 / 255.0);
  cv::Mat vp, wp;
  cv::copyMakeBorder(values, vp, 0, 0, pad, pad, cv::BORDER_WRAP);
  cv::copyMakeBorder(weight, wp, 0, 0, pad, pad, cv::BORDER_WRAP);
  cv::GaussianBlur(vp, vp, cv::Size(0, 0), sx, sy, cv::BORDER_REPLICATE);
  cv::GaussianBlur(wp, wp, cv::Size(0, 0), sx, sy, cv::BORDER_REPLICATE);
  const cv::Rect inside(pad, 0, g.pa_count, frame.rows);
  cv::Mat out = vp(inside) / wp(inside);
  out.setTo(kNaN, wp(inside) < 0.5f);
  divide_by_rows(out, ring_sigma(out, 2, 1));
  return out;
}

int find_root(std::vector<int>& parent, int i) {
  while (parent[i] != i) i = parent[i] = parent[parent[i]];
  return i;
}

// One significant region of one frame.
struct Region {
  int frame = 0;
  int row_lo = 0, row_hi = 0;
  int pixels = 0;
  double score = 0.0;              // Σ σ over its pixels
  std::vector<int16_t> outer_row;  // per PA column: its outermost row, −1 where absent
};

// The circular arc of PA columns that covers every occupied column: 360° less the
// largest gap. Returns (first column, number of columns).
std::pair<int, int> covering_arc(const std::vector<uint8_t>& occupied) {
  const int n = int(occupied.size());
  int first_on = -1;
  for (int c = 0; c < n && first_on < 0; ++c)
    if (occupied[c]) first_on = c;
  if (first_on < 0) return {0, 0};
  int gap = 0, gap_end = first_on;  // gap_end: the occupied column after the largest gap
  int run = 0;
  for (int k = 1; k <= n; ++k) {  // walk once round, starting after first_on
    const int c = (first_on + k) % n;
    if (!occupied[c]) {
      ++run;
    } else {
      if (run > gap) {
        gap = run;
        gap_end = c;
      }
      run = 0;
    }
  }
  return {gap_end, n - gap};
}

std::vector<Region> frame_regions(const cv::Mat& sigma, int frame, const RowRange& rows, const FrontOptions& o,
                                  const PolarGrid& g) {
  cv::Mat mask = sigma > float(o.threshold_sigma);  // NaN compares false: never significant
  if (rows.lo > 0) mask.rowRange(0, std::min(rows.lo, mask.rows)).setTo(0);
  if (rows.hi + 1 < mask.rows) mask.rowRange(std::max(0, rows.hi + 1), mask.rows).setTo(0);
  cv::Mat labels, stats, centroids;
  const int count = cv::connectedComponentsWithStats(mask, labels, stats, centroids, 8, CV_32S);
  std::vector<int> parent(count);
  std::iota(parent.begin(), parent.end(), 0);
  // Join regions across the 0/360 seam: column 0 touches the last column (8-connected).
  const int last = g.pa_count - 1;
  for (int r = 0; r < labels.rows; ++r) {
    const int a = labels.at<int>(r, 0);
    if (a == 0) continue;
    for (int dr = -1; dr <= 1; ++dr) {
      const int rr = r + dr;
      if (rr < 0 || rr >= labels.rows) continue;
      const int b = labels.at<int>(rr, last);
      if (b != 0) parent[find_root(parent, a)] = find_root(parent, b);
    }
  }
  std::vector<int> pixels(count, 0), lo(count, labels.rows), hi(count, -1);
  for (int l = 1; l < count; ++l) {
    const int root = find_root(parent, l);
    pixels[root] += stats.at<int>(l, cv::CC_STAT_AREA);
    lo[root] = std::min(lo[root], stats.at<int>(l, cv::CC_STAT_TOP));
    hi[root] = std::max(hi[root], stats.at<int>(l, cv::CC_STAT_TOP) + stats.at<int>(l, cv::CC_STAT_HEIGHT) - 1);
  }
  const int min_rows = int(std::ceil(o.min_height_extent_rs / g.height_step_rs - 1e-9));
  std::vector<int> index(count, -1);
  std::vector<Region> regions;
  for (int l = 1; l < count; ++l) {
    if (find_root(parent, l) != l || pixels[l] < o.min_pixels || hi[l] - lo[l] + 1 < min_rows) continue;
    index[l] = int(regions.size());
    Region region;
    region.frame = frame;
    region.row_lo = lo[l];
    region.row_hi = hi[l];
    region.pixels = pixels[l];
    region.outer_row.assign(g.pa_count, -1);
    regions.push_back(std::move(region));
  }
  if (regions.empty()) return regions;
  for (int r = 0; r < labels.rows; ++r) {
    const int* lab = labels.ptr<int>(r);
    const float* v = sigma.ptr<float>(r);
    for (int c = 0; c < g.pa_count; ++c) {
      if (lab[c] == 0) continue;
      const int k = index[find_root(parent, lab[c])];
      if (k < 0) continue;
      regions[k].score += v[c];
      regions[k].outer_row[c] = int16_t(r);  // rows ascend: the last one is the outermost
    }
  }
  // The PA extent, across the seam too.
  const int min_cols = int(std::ceil(o.min_pa_extent_deg / g.pa_step_deg - 1e-9));
  std::vector<Region> kept;
  for (auto& region : regions) {
    std::vector<uint8_t> occupied(g.pa_count);
    for (int c = 0; c < g.pa_count; ++c) occupied[c] = region.outer_row[c] >= 0;
    if (covering_arc(occupied).second >= min_cols) kept.push_back(std::move(region));
  }
  return kept;
}

bool overlaps(const Region& a, const Region& b) {
  for (size_t c = 0; c < a.outer_row.size(); ++c)
    if (a.outer_row[c] >= 0 && b.outer_row[c] >= 0) return true;
  return false;
}

// The central PA: the PA of the centroid of the sky the front swept through in the field —
// at each PA of the span, the area between the lowest height examined (lo) and the highest
// the front reached there, whose centroid is Σ (cos PA, sin PA) ∫ r² dr, ∫ r² dr =
// (H³ − lo³)/3. A PA where the front barely clears lo (a faint flank near the occulter,
// easily lost to the threshold) weighs little; the high middle of the CME weighs most. As
// a direction it needs no unwrapping, across north or round a halo.
double central_pa(const std::vector<std::vector<float>>& edge_rs, int first_col, int span_cols, double lo_rs,
                  const PolarGrid& g) {
  double sx = 0.0, sy = 0.0;
  for (int j = 0; j < span_cols; ++j) {
    const int c = (first_col + j) % g.pa_count;
    double top = -1.0;
    for (const auto& frame : edge_rs)
      if (std::isfinite(frame[c])) top = std::max(top, double(frame[c]));
    if (top < lo_rs) continue;
    const double w = top * top * top - lo_rs * lo_rs * lo_rs, pa = g.pa_deg(c) * kRadPerDeg;
    sx += w * std::cos(pa);
    sy += w * std::sin(pa);
  }
  if (sx == 0.0 && sy == 0.0) return std::fmod(g.pa_deg(first_col) + 0.5 * (span_cols - 1) * g.pa_step_deg, 360.0);
  return std::fmod(std::atan2(sy, sx) * kDegPerRad + 360.0, 360.0);
}

std::vector<int> usable_track_rows(const PolarSequence& s, const FrontOptions& o, RowRange& rows) {
  rows = usable_rows(s, o);
  std::vector<int> out;
  for (int r = std::max(0, rows.lo); r <= std::min(rows.hi, s.polar.height_count - 1); ++r) out.push_back(r);
  return out;
}

}  // namespace

std::vector<TrackPoint> follow_track(const PolarSequence& s, double pa_deg, int from_frame, const FrontOptions& o,
                                     TrackCensoring* censored, const std::vector<double>& ceiling_rs) {
  TrackCensoring count;
  RowRange range;
  const std::vector<int> rows = usable_track_rows(s, o, range);
  const int frames = int(s.frames.size()) - from_frame;
  const int n = int(rows.size());
  if (frames <= 0 || n == 0) return {};
  // v[k][i]: band-median σ of frame from_frame + k at row rows[i]; no data scores 0. Capped
  // so that one very bright frame cannot drag the path away from the others.
  std::vector<std::vector<float>> v(frames, std::vector<float>(n, 0.0f));
  std::vector<std::vector<uint8_t>> has_data(frames, std::vector<uint8_t>(n, 0));
  for (int k = 0; k < frames; ++k) {
    const auto profile = band_profile(s.frames[from_frame + k], s.polar, pa_deg, o.track_half_width_deg);
    const std::size_t at = std::size_t(from_frame + k);
    const double ceiling = at < ceiling_rs.size() ? ceiling_rs[at] : std::numeric_limits<double>::infinity();
    for (int i = 0; i < n; ++i) {
      const float x = profile[rows[i]];
      v[k][i] = std::isfinite(x) ? std::clamp(x, -10.0f, 50.0f) : 0.0f;
      has_data[k][i] = std::isfinite(x);
      // Above the ceiling (another front's sky): the lowest score, so that neither the
      // path nor the edge search goes there.
      if (s.polar.height_rs(rows[i]) > ceiling) v[k][i] = -10.0f;
    }
  }
  const double neg_inf = -std::numeric_limits<double>::infinity();
  std::vector<std::vector<double>> score(frames, std::vector<double>(n, neg_inf));
  std::vector<std::vector<int>> from(frames, std::vector<int>(n, -1));
  for (int i = 0; i < n; ++i) score[0][i] = v[0][i];
  for (int k = 1; k < frames; ++k) {
    const double dt = s.utc_s[from_frame + k] - s.utc_s[from_frame + k - 1];
    for (int i = 0; i < n; ++i) {
      double best = neg_inf;
      int arg = -1;
      for (int j = i; j >= 0; --j) {  // the height may not fall: predecessors at or below
        const double speed = (s.polar.height_rs(rows[i]) - s.polar.height_rs(rows[j])) * kKmPerRs / std::max(dt, 1.0);
        if (speed > o.max_speed_km_s) break;  // lower predecessors are faster still
        const double cost = o.jump_penalty_per_1000_km_s * std::max(0.0, speed - o.jump_free_km_s) / 1000.0;
        const double total = score[k - 1][j] - cost;
        if (total > best) {
          best = total;
          arg = j;
        }
      }
      if (arg >= 0) {
        score[k][i] = best + v[k][i];
        from[k][i] = arg;
      }
    }
  }
  int at = int(std::max_element(score[frames - 1].begin(), score[frames - 1].end()) - score[frames - 1].begin());
  std::vector<int> path(frames);
  for (int k = frames - 1; k >= 0; --k) {
    path[k] = at;
    if (k > 0) at = from[k][at];
  }
  // The path runs along the bright band of the front; its leading edge is that band's
  // outer side: climb to the band's local peak, then outward to where the profile falls
  // below edge_fraction × peak (linear between rows; a half-maximum edge is common practice).
  std::vector<TrackPoint> track;
  bool left_field = false;  // a frame's edge already lay at or beyond the field stop
  double floor_rs = -std::numeric_limits<double>::infinity();
  for (int k = 0; k < frames; ++k) {
    int i = path[k];
    if (i < 0) continue;
    if (v[k][i] < o.threshold_sigma) {
      // Nothing significant on the path: no front in this frame — or one that has run out
      // of the data, when the path (which never falls) is at the top of the field or in a
      // missing block. Those are censored.
      if (left_field || (!track.empty() && i >= n - 3)) ++count.at_field_stop;
      else if (!has_data[k][i]) ++count.at_data_gap;
      continue;
    }
    while (i + 1 < n && v[k][i + 1] > v[k][i]) ++i;
    const float peak = v[k][i];
    const float level = float(o.edge_fraction) * peak;
    double height = s.polar.height_rs(rows[i]);
    bool blind = false;  // the band has no data just outside the front (a missing block)
    bool fell = false;   // the profile fell to the level below the field stop
    for (int j = i; j + 1 < n; ++j) {
      if (!has_data[k][j + 1]) {
        blind = true;
        break;
      }
      if (v[k][j + 1] < level) {
        const double f = (v[k][j] - level) / std::max(1e-6f, v[k][j] - v[k][j + 1]);
        height = s.polar.height_rs(rows[j]) + f * s.polar.height_step_rs;
        fell = true;
        break;
      }
    }
    // Censored: the edge lies in a gap, at or beyond the field stop, or the band is still
    // brightest on the lowest usable row (the front not yet clear of the occulter).
    if (blind) {
      ++count.at_data_gap;
      continue;
    }
    if (!fell) {
      ++count.at_field_stop;
      left_field = true;
      continue;
    }
    if (i == 0 && n > 1 && v[k][1] < v[k][0]) {
      ++count.behind_occulter;
      continue;
    }
    height = std::max(height, floor_rs);  // the refinement keeps the track from falling
    floor_rs = height;
    track.push_back({from_frame + k, s.utc_s[from_frame + k], pa_deg, height, double(peak)});
  }
  if (censored) *censored = count;
  return track;
}

bool height_measurable(const PolarSequence& s, int frame, double pa_deg, double height_rs, double margin_rs,
                       std::string& why) {
  const PolarGrid& g = s.polar;
  if (frame < 0 || frame >= int(s.frames.size())) {
    why = "outside the frames";
    return false;
  }
  const std::vector<float> profile =
      band_profile(s.frames[std::size_t(frame)], g, pa_deg, FrontOptions{}.track_half_width_deg);
  const double row = (height_rs - g.height_rs(0)) / g.height_step_rs;
  const int margin = std::max(1, int(std::ceil(margin_rs / g.height_step_rs - 1e-9)));
  const int at = int(std::lround(row));
  if (at >= g.height_count || at < 0) {
    why = at < 0 ? "behind the occulter" : "at the field stop";
    return false;
  }
  // Walk outward and inward from the point: the first row without data within the margin
  // says which edge of the data it sits at.
  for (int d = 0; d <= margin; ++d) {
    const int up = at + d;
    if (up >= g.height_count || !std::isfinite(profile[std::size_t(std::max(0, up))])) {
      bool beyond = true;  // nothing but missing rows from here to the top: the field stop
      for (int r = std::max(0, up); r < g.height_count; ++r) beyond &= !std::isfinite(profile[std::size_t(r)]);
      why = beyond ? "at the field stop" : "at a data gap";
      return false;
    }
    const int down = at - d;
    if (down < 0 || !std::isfinite(profile[std::size_t(down)])) {
      bool below = true;  // nothing but missing rows down to the bottom: the occulter
      for (int r = std::min(down, g.height_count - 1); r >= 0; --r) below &= !std::isfinite(profile[std::size_t(r)]);
      why = below ? "behind the occulter" : "at a data gap";
      return false;
    }
  }
  return true;
}

namespace {

// Step 3's dynamic programme, one for the CME's own chain and for its companions: per
// region, the best-scoring chain (Σ σ) of regions over consecutive frames ending there,
// each predecessor overlapping it in PA with an outer edge not above its own by more than
// a row. Only regions `eligible(frame, index)` take part (the others get length 0 and are
// nobody's predecessor). The end: the best chain of ≥ min_frames frames whose outer edge
// rose by ≥ min_rise_rs (end_frame < 0 when none).
struct Link {
  double total = 0.0;
  int length = 1;
  int prev = -1;
  int first_row_hi = 0;
};
struct ChainSearch {
  std::vector<std::vector<Link>> links;
  int end_frame = -1, end_index = -1;
};

template <class Eligible>
ChainSearch best_chain(const std::vector<std::vector<Region>>& regions, Eligible eligible, const FrontOptions& o,
                       const PolarGrid& g) {
  const int frames = int(regions.size());
  ChainSearch out;
  out.links.resize(frames);
  double best_total = 0.0;
  for (int k = 0; k < frames; ++k) {
    out.links[k].assign(regions[k].size(), Link{});
    for (size_t i = 0; i < regions[k].size(); ++i) {
      const Region& r = regions[k][i];
      if (!eligible(k, i)) {
        out.links[k][i].length = 0;
        continue;
      }
      Link link{r.score, 1, -1, r.row_hi};
      if (k > 0)
        for (size_t j = 0; j < regions[k - 1].size(); ++j) {
          const Region& p = regions[k - 1][j];
          const Link& pl = out.links[k - 1][j];
          if (pl.length == 0 || r.row_hi + 1 < p.row_hi || !overlaps(r, p)) continue;
          if (pl.total + r.score > link.total) link = Link{pl.total + r.score, pl.length + 1, int(j), pl.first_row_hi};
        }
      out.links[k][i] = link;
      const bool rises = (r.row_hi - link.first_row_hi) * g.height_step_rs >= o.min_rise_rs - 1e-9;
      if (link.length >= o.min_frames && rises && link.total > best_total) {
        best_total = link.total;
        out.end_frame = k;
        out.end_index = int(i);
      }
    }
  }
  return out;
}

// The chain that ends at the search's end, oldest first, as (frame, index) pairs.
std::vector<std::pair<int, int>> chain_members(const ChainSearch& c) {
  std::vector<std::pair<int, int>> out;
  for (int k = c.end_frame, i = c.end_index; k >= 0 && i >= 0; i = c.links[k][i].prev, --k) out.emplace_back(k, i);
  std::reverse(out.begin(), out.end());
  return out;
}

using Taken = std::vector<std::vector<uint8_t>>;  // [frame][region]

// Everything a finder needs from the sequence once: usable rows and per-frame regions.
struct Scene {
  RowRange rows;
  std::vector<std::vector<Region>> regions;
};

// A found chain made into a Front: its companions (step 3b, among regions not `taken`),
// span, central and outermost PA (step 4). `taken` gains the chain's and companions'
// regions. No track yet (step 5).
Front front_from_chain(const PolarSequence& s, const FrontOptions& o, const Scene& scene,
                       const std::vector<std::pair<int, int>>& members, Taken& taken) {
  const PolarGrid& g = s.polar;
  const RowRange& rows = scene.rows;
  const auto& regions = scene.regions;
  const int frames = int(s.frames.size());
  Front front;
  front.leading_edge_rs.assign(frames, std::vector<float>(g.pa_count, kNaN));
  std::vector<const Region*> chain;
  for (const auto& [k, i] : members) chain.push_back(&regions[k][i]);
  front.found = true;
  front.onset_frame = chain.front()->frame;
  front.onset_utc_s = s.utc_s[front.onset_frame];
  front.last_frame = chain.back()->frame;

  // Step 3b, a halo: a CME heading along the line of sight shows as a front round the
  // occulter, brightest where the line of sight grazes its flanks — often on two opposite
  // sides, with fainter parts between that the threshold splits off. Another chain that
  // moves with the chosen one is the same front: in ≥ min_frames frames of the chosen
  // chain it lies apart from it in PA with its outer edge at the same height (within
  // companion_height_fraction of the height above the lowest row examined, at least 3
  // rows), and it starts within companion_onset_frames of it (a CME launched later
  // elsewhere can pass through the same heights, but it does not start with this one).
  // Its regions join the chain's (up to three such chains).
  std::vector<const Region*> joined;
  {
    std::map<int, const Region*> main_at;  // frame → the chosen chain's region there
    for (const Region* r : chain) main_at[r->frame] = r;
    Taken unavailable = taken;
    for (const auto& [k, i] : members) taken[k][i] = 1;
    for (int k = 0; k < frames; ++k)
      for (size_t i = 0; i < regions[k].size(); ++i)
        if (auto m = main_at.find(k); m != main_at.end() && overlaps(regions[k][i], *m->second)) unavailable[k][i] = 1;
    const auto matches = [&](const Region& r) {
      const auto m = main_at.find(r.frame);
      if (m == main_at.end()) return false;
      const double above_rows = std::max(0, m->second->row_hi - rows.lo);
      const double tolerance = std::max(3.0, o.companion_height_fraction * above_rows);
      return std::abs(r.row_hi - m->second->row_hi) <= tolerance;
    };
    for (int round = 0, tries = 0; round < 3 && tries < 8; ++tries) {
      const ChainSearch c = best_chain(
          regions, [&](int k, size_t i) { return !unavailable[k][i] && matches(regions[k][i]); }, o, g);
      if (c.end_frame < 0) break;
      const auto companion = chain_members(c);
      const bool starts_with = companion.front().first <= front.onset_frame + o.companion_onset_frames;
      for (const auto& [k, i] : companion) {
        unavailable[k][i] = 1;
        if (!starts_with) continue;
        joined.push_back(&regions[k][i]);
        taken[k][i] = 1;
        // Regions of that frame overlapping the companion are not another companion.
        for (size_t j = 0; j < regions[k].size(); ++j)
          if (overlaps(regions[k][j], regions[k][i])) unavailable[k][j] = 1;
      }
      round += starts_with ? 1 : 0;
    }
  }

  // Step 4 and the span: the union of the chain's regions (and its companions').
  std::vector<uint8_t> occupied(g.pa_count, 0);
  for (const Region* r : joined)
    for (int c = 0; c < g.pa_count; ++c)
      if (r->outer_row[c] >= 0 && r->frame >= front.onset_frame && r->frame <= front.last_frame) {
        occupied[c] = 1;
        front.leading_edge_rs[r->frame][c] = float(g.height_rs(r->outer_row[c]));
      }
  front.companion_regions = int(joined.size());
  for (const Region* r : chain)
    for (int c = 0; c < g.pa_count; ++c)
      if (r->outer_row[c] >= 0) {
        occupied[c] = 1;
        front.leading_edge_rs[r->frame][c] = float(g.height_rs(r->outer_row[c]));
      }
  const auto [first_col, span_cols] = covering_arc(occupied);
  front.width_deg = span_cols * g.pa_step_deg;
  // Fronts on both sides of the Sun (no gap of half a turn): the CME runs along the line
  // of sight, toward or away from the observer.
  front.encircles = !joined.empty() && front.width_deg > 180.0;
  front.pa_from_deg = g.pa_deg(first_col);
  front.pa_to_deg = std::fmod(g.pa_deg(first_col) + (span_cols - 1) * g.pa_step_deg, 360.0);
  front.central_pa_deg = central_pa(front.leading_edge_rs, first_col, span_cols, g.height_rs(rows.lo), g);

  // The PA of the outermost front: in the last chain frame before the front first reaches
  // the field stop (else the onset frame), the middle of the columns at its highest row.
  // Not any later frame below the stop: once the nose has left the field, what remains
  // below it is a flank, and a track there runs slower than the leading edge (issue 11).
  const Region* at = chain.front();
  for (const Region* r : chain) {
    if (r->row_hi >= rows.hi) break;
    at = r;
  }
  std::vector<uint8_t> top(g.pa_count, 0);
  for (int c = 0; c < g.pa_count; ++c) top[c] = at->outer_row[c] == at->row_hi;
  const auto [top_first, top_cols] = covering_arc(top);
  front.outermost_pa_deg = std::fmod(g.pa_deg(top_first) + 0.5 * (top_cols - 1) * g.pa_step_deg, 360.0);
  return front;
}

// The highest leading edge of a front within ±half_width_deg of pa_deg in one frame; NaN
// where it has none there.
double edge_near(const Front& f, int frame, double pa_deg, double half_width_deg, const PolarGrid& g) {
  double top = std::numeric_limits<double>::quiet_NaN();
  const auto& row = f.leading_edge_rs[std::size_t(frame)];
  for (int c = 0; c < g.pa_count; ++c) {
    const double d = std::fmod(std::abs(g.pa_deg(c) - pa_deg), 360.0);
    if (std::min(d, 360.0 - d) <= half_width_deg && std::isfinite(row[std::size_t(c)]))
      top = std::isfinite(top) ? std::max(top, double(row[std::size_t(c)])) : double(row[std::size_t(c)]);
  }
  return top;
}

// Step 5 for a front: its tracks along the central and the outermost PA, under `ceiling`
// (per frame, R☉; none when empty). False when neither has min_frames points: a region
// with no front that can be followed outward over min_frames frames is not a CME — a
// residual of a steep static structure (a streamer's edge moved by pointing jitter) can
// persist and rise a little, but leaves no significant track.
bool track_front(const PolarSequence& s, const FrontOptions& o, Front& front, const std::vector<double>& ceiling = {}) {
  front.track = follow_track(s, front.central_pa_deg, front.onset_frame, o, &front.track_censored, ceiling);
  const std::vector<TrackPoint> outer = follow_track(s, front.outermost_pa_deg, front.onset_frame, o, nullptr, ceiling);
  // The origin: where the least-squares line through the longer track's heights meets
  // Sun centre, h = 0. Parts of one self-similar front (h ∝ the front's height) share
  // it; a CME launched later does not (step 6).
  const std::vector<TrackPoint>& line = outer.size() > front.track.size() ? outer : front.track;
  double n = 0.0, st = 0.0, sh = 0.0, stt = 0.0, sth = 0.0;
  for (const TrackPoint& p : line) {
    const double t = p.utc_s - front.onset_utc_s;
    n += 1.0, st += t, sh += p.height_rs, stt += t * t, sth += t * p.height_rs;
  }
  const double denom = n * stt - st * st;
  const double v = denom > 0.0 ? (n * sth - st * sh) / denom : 0.0;  // R☉/s
  front.origin_utc_s = v > 0.0 ? front.onset_utc_s + (st - sh / v) / n : std::numeric_limits<double>::quiet_NaN();
  return int(std::max(front.track.size(), outer.size())) >= o.min_frames;
}

// The least-squares line h = h0 + v (t − t0) through a track's heights (R☉, R☉/s, t0 its
// first time); v NaN with fewer than two distinct times.
struct HeightLine {
  double t0 = 0.0, h0 = 0.0, v = std::numeric_limits<double>::quiet_NaN();
};
HeightLine height_line(const std::vector<TrackPoint>& track) {
  HeightLine line;
  if (track.empty()) return line;
  line.t0 = track.front().utc_s;
  double n = 0.0, st = 0.0, sh = 0.0, stt = 0.0, sth = 0.0;
  for (const TrackPoint& p : track) {
    const double t = p.utc_s - line.t0;
    n += 1.0, st += t, sh += p.height_rs, stt += t * t, sth += t * p.height_rs;
  }
  const double denom = n * stt - st * st;
  if (!(denom > 0.0)) return line;
  line.v = (n * sth - st * sh) / denom;
  line.h0 = (sh - line.v * st) / n;
  return line;
}

// Origin (h = 0) and sum of squared residuals of the least-squares line through points
// [from, to) of a track; NaN origin when it does not rise.
std::pair<double, double> line_origin(const std::vector<TrackPoint>& p, size_t from, size_t to) {
  double n = 0.0, st = 0.0, sh = 0.0, stt = 0.0, sth = 0.0;
  const double t0 = p[from].utc_s;
  for (size_t i = from; i < to; ++i) {
    const double t = p[i].utc_s - t0;
    n += 1.0, st += t, sh += p[i].height_rs, stt += t * t, sth += t * p[i].height_rs;
  }
  const double denom = n * stt - st * st;
  if (!(denom > 0.0)) return {std::numeric_limits<double>::quiet_NaN(), 0.0};
  const double v = (n * sth - st * sh) / denom, h0 = (sh - v * st) / n;
  double ssr = 0.0;
  for (size_t i = from; i < to; ++i) ssr += std::pow(p[i].height_rs - h0 - v * (p[i].utc_s - t0), 2);
  return {v > 0.0 ? t0 - h0 / v : std::numeric_limits<double>::quiet_NaN(), ssr};
}

// Step 6: a later chain can begin on a piece of an earlier front (its origin) and run on
// into a new CME rising through it. Where the track splits best into two straight lines
// (least total squared residual, each part ≥ 2 points, the later ≥ min_frames) and the
// first part shares the earlier front's origin while the later does not, the first part
// is that front's: the new CME starts with the later part. Returns the frame to start
// from, or −1 to keep the chain whole.
int split_from_earlier(const std::vector<TrackPoint>& track, const Front& earlier, double tolerance_s,
                       const FrontOptions& o) {
  const size_t n = track.size();
  if (n < size_t(o.min_frames) + 2) return -1;
  double best = std::numeric_limits<double>::infinity();
  size_t at = 0;
  for (size_t j = 2; j + size_t(o.min_frames) <= n; ++j) {
    const double ssr = line_origin(track, 0, j).second + line_origin(track, j, n).second;
    if (ssr < best) best = ssr, at = j;
  }
  if (at == 0) return -1;
  const double head = line_origin(track, 0, at).first, tail = line_origin(track, at, n).first;
  const bool head_same = std::abs(head - earlier.origin_utc_s) <= tolerance_s;
  const bool tail_other = !(std::abs(tail - earlier.origin_utc_s) <= tolerance_s);
  return head_same && tail_other ? track[at].frame : -1;
}

// Step 6: a later chain can also begin on a slower structure in an earlier front's wake
// (its rear rim or legs, rising little from frame to frame) and run on into a new CME that
// overtakes it there. Then the track's first points lie above the straight line through
// the rest carried back, by more than off_line_rs at each, while the rest lies on that
// line (within off_line_rs at every point, ≥ min_frames points) with an origin not the
// earlier front's: the new CME starts with the rest, at the first such split. Not a
// single CME's acceleration: a constant 100 m/s² bends a track by 0.03 R☉ over a 10-min
// frame, far under off_line_rs. Returns the frame to start from, or −1 to keep the chain
// whole (tests/imaging/front_multi_test.cpp: the faster CME 45° from both views, whose
// chain began on the slower one's rear, 1.1 R☉ above its own line a frame earlier).
int cut_wake_head(const std::vector<TrackPoint>& track, const Front& earlier, double tolerance_s, double off_line_rs,
                  const FrontOptions& o) {
  const size_t n = track.size();
  for (size_t j = 1; j + size_t(o.min_frames) <= n; ++j) {
    const HeightLine line = height_line({track.begin() + std::ptrdiff_t(j), track.end()});
    if (!(line.v > 0.0)) continue;
    const auto off = [&](const TrackPoint& p) { return p.height_rs - (line.h0 + line.v * (p.utc_s - line.t0)); };
    bool head_above = true, tail_on = true;
    for (size_t i = 0; i < j; ++i) head_above = head_above && off(track[i]) > off_line_rs;
    for (size_t i = j; i < n; ++i) tail_on = tail_on && std::abs(off(track[i])) <= off_line_rs;
    const double origin = line.t0 - line.h0 / line.v;
    if (head_above && tail_on && !(std::abs(origin - earlier.origin_utc_s) <= tolerance_s)) return track[j].frame;
  }
  return -1;
}

}  // namespace

std::vector<double> ceiling_under(const Front& front, const std::vector<const Front*>& others, const PolarSequence& s,
                                  double pa_deg) {
  std::vector<double> ceiling(s.frames.size(), std::numeric_limits<double>::infinity());
  bool any = false;
  for (size_t k = 0; k < s.frames.size(); ++k) {
    const double own = edge_near(front, int(k), pa_deg, 10.0, s.polar);
    if (!std::isfinite(own)) continue;
    for (const Front* other : others) {
      const double above = edge_near(*other, int(k), pa_deg, 10.0, s.polar);
      if (std::isfinite(above) && above > own + s.polar.height_step_rs) {
        ceiling[k] = std::min(ceiling[k], 0.5 * (own + above));
        any = true;
      }
    }
  }
  if (!any) ceiling.clear();
  return ceiling;
}

namespace {

Scene find_regions(const PolarSequence& s, const FrontOptions& o, std::string& why_not) {
  Scene scene;
  scene.rows = usable_rows(s, o);
  const int frames = int(s.frames.size());
  if (scene.rows.hi < scene.rows.lo) {
    why_not = "no CME found: the frames have no heights with data clear of the occulter and field stop.";
    return scene;
  }
  // Steps 1–2: significant regions per frame.
  // Each frame's regions depend on that frame alone: the later half of the frames is
  // done on a second thread (on a machine with more than one core), each frame's regions
  // the same on either (PolarFrames reads are safe from several threads).
  scene.regions.resize(frames);
  const auto regions_of = [&](int from, int to) {
    for (int k = from; k < to; ++k)
      scene.regions[k] = frame_regions(smooth_sigma(s.frames[k], o, s.polar), k, scene.rows, o, s.polar);
  };
  const int half = std::thread::hardware_concurrency() > 1 ? frames / 2 : frames;
  std::future<void> later;
  if (half < frames) later = std::async(std::launch::async, regions_of, half, frames);
  regions_of(0, half);
  if (later.valid()) later.get();
  int any = 0;
  for (int k = 0; k < frames; ++k) any += int(scene.regions[k].size());
  if (any == 0)
    why_not = "no CME found: no frame has a significant region large enough (" +
              std::to_string(o.threshold_sigma).substr(0, 4) + "σ).";
  return scene;
}

Taken nothing_taken(const Scene& scene) {
  Taken taken(scene.regions.size());
  for (size_t k = 0; k < scene.regions.size(); ++k) taken[k].assign(scene.regions[k].size(), 0);
  return taken;
}

std::string no_chain_why(const FrontOptions& o) {
  return "no CME found: no significant region persists over " + std::to_string(o.min_frames) +
         " consecutive frames while moving outward.";
}

std::string no_track_why(const FrontOptions& o) {
  return "no CME found: a region is significant, but no front can be followed outward over " +
         std::to_string(o.min_frames) + " frames along it.";
}

// Step 6: whether `later` is a part of `earlier` that trails it — seen after it (its
// onset later), below its leading edge in every frame of its track (within ±10° of the
// track's PA), yet with an origin earlier than its by more than tolerance_s. A CME of its
// own would have been launched before the one above it and been overtaken by it, the
// interaction the shell model leaves out (README "Limits"); what it is in our synthetic
// events is the shell's own inner rim or a leg, whose short, faint track under the front
// rises too slowly (tests/imaging/front_multi_test.cpp, the narrow tilted CME).
bool trails(const Front& later, const Front& earlier, double tolerance_s, const PolarSequence& s) {
  if (!(later.onset_utc_s > earlier.onset_utc_s) || !(later.origin_utc_s < earlier.origin_utc_s - tolerance_s) ||
      later.track.empty())
    return false;
  for (const TrackPoint& p : later.track) {
    const double above = edge_near(earlier, p.frame, p.pa_deg, 10.0, s.polar);
    if (!(above > p.height_rs + s.polar.height_step_rs)) return false;
  }
  return true;
}

// Step 6: whether `later` rides in the wake of `earlier`: seen after it, slower on the
// sky, and below the earlier front's leading edge carried on along its straight line at
// every point of its track. That is the front's own trailing structure — in our synthetic
// events the shell's rear rim and legs, which a fast CME leaves in the field after its
// leading edge has gone beyond the field stop (measure_test's 2300 km/s event gave a
// "second CME" at 1215 km/s, 20 minutes later, this way) — or a slower CME launched later
// under it. The chain is the front's wake (Wake::part) when its own line points to no
// later origin (parts of one self-similar front share its origin; the fast event's rear
// pointed 29 min earlier) or it keeps pace with the front (≥ 0.85 of its sky speed: a
// trailing part of the same ejecta; the slow wide event of
// tests/app/shell_measure_test.cpp, 0.90, with an origin 2.8 h later from a four-point
// line). Otherwise one view cannot tell (Wake::doubtful): tests/fit/associate_test.cpp's
// second CME in view b (44 min later, 0.67 of the first's sky speed, three points) and a
// 30°-wide inner structure of measure_test's 900 km/s event under clang (29 min later,
// 0.67, three points) look alike there; the other views decide (fit/associate.hpp
// doubtful_stands_alone). A faster chain following is never a wake.
enum class Wake { none, part, doubtful };
Wake in_wake(const Front& later, const Front& earlier, double tolerance_s) {
  if (!(later.onset_utc_s > earlier.onset_utc_s) || later.track.size() < 2 || earlier.track.size() < 2) return Wake::none;
  const HeightLine lead = height_line(earlier.track), follow = height_line(later.track);
  if (!(lead.v > 0.0) || !(follow.v < lead.v)) return Wake::none;
  for (const TrackPoint& p : later.track)
    if (!(p.height_rs < lead.h0 + lead.v * (p.utc_s - lead.t0))) return Wake::none;
  if (later.origin_utc_s < earlier.origin_utc_s + tolerance_s || follow.v >= 0.85 * lead.v) return Wake::part;
  return Wake::doubtful;
}

// Whether two fronts' spans overlap or lie within near_deg of each other.
bool near_in_sky(const Front& a, const Front& b, double near_deg) {
  const auto span = [](const Front& f) { return std::fmod(f.pa_to_deg - f.pa_from_deg + 720.0, 360.0); };
  // Distance from a PA to a span: 0 inside, else to the nearer end.
  const auto apart = [&](double pa, const Front& f) {
    const double into = std::fmod(pa - f.pa_from_deg + 720.0, 360.0);
    return into <= span(f) ? 0.0 : std::min(into - span(f), 360.0 - into);
  };
  return std::min({apart(a.pa_from_deg, b), apart(a.pa_to_deg, b), apart(b.pa_from_deg, a), apart(b.pa_to_deg, a)}) <=
         near_deg;
}

// Step 6: a later front whose chain ends while an earlier, slower one goes on above it in
// the same sky — the threshold joins the later one's bright sheath to the earlier one's legs
// and rear into one region, which the earlier chain took — is followed on through that
// region for as long as its track goes on (tracked under the earlier front, above). In
// each such frame its leading edge per PA column of its span is the outermost significant
// pixel (step 1) of what lies below a cap — its track's height there (the band's outer
// side, step 5) plus one row, at most midway up to the earlier front's edge — connected to
// its track's point. Where the earlier front's legs fill the sky above it the edge is the
// cap: the track, not the threshold, then sets the height. Without it the later front's
// edges end when the merge begins, and its shell rests on its first two or three frames
// low in the field (tests/app/measure_multi_test.cpp's follower: shell speed 17 % low;
// with a cap 0, 1, 2 or 3 rows above the track: −0.5, +1.1, +9.6, +10.4 %). Fronts by onset.
void follow_through_merge(std::vector<Front>& fronts, const PolarSequence& s, const FrontOptions& o,
                          const RowRange& rows) {
  const PolarGrid& g = s.polar;
  const double step = g.height_step_rs;
  for (size_t l = 1; l < fronts.size(); ++l) {
    Front& late = fronts[l];
    const HeightLine line = height_line(late.track);
    int first_col = 0;
    for (int c = 1; c < g.pa_count; ++c)
      if (std::abs(std::remainder(g.pa_deg(c) - late.pa_from_deg, 360.0)) <
          std::abs(std::remainder(g.pa_deg(first_col) - late.pa_from_deg, 360.0)))
        first_col = c;
    const int span_cols = std::min(g.pa_count, int(std::lround(late.width_deg / g.pa_step_deg)));
    int last = late.last_frame;
    for (const TrackPoint& p : late.track) {
      if (p.frame <= late.last_frame) continue;
      double above = std::numeric_limits<double>::quiet_NaN();  // the lowest earlier edge over it
      for (size_t e = 0; e < l; ++e)
        if (fronts[e].last_frame >= p.frame && near_in_sky(late, fronts[e], o.near_pa_deg) &&
            line.v > height_line(fronts[e].track).v) {
          const double h = edge_near(fronts[e], p.frame, p.pa_deg, 10.0, g);
          if (h > p.height_rs + step && !(h > above)) above = h;
        }
      if (!std::isfinite(above)) continue;  // nothing above it took its region
      const double cap_rs = std::min(p.height_rs + step, 0.5 * (p.height_rs + above));
      const int cap_row = std::min(rows.hi, int(std::floor((cap_rs - g.height_rs(0)) / step)));
      // The span's columns in order (across north too), rows up to the cap.
      const cv::Mat sigma = smooth_sigma(s.frames[size_t(p.frame)], o, g);
      cv::Mat mask(g.height_count, span_cols, CV_8U, cv::Scalar(0));
      for (int r = std::max(0, rows.lo); r <= cap_row; ++r)
        for (int j = 0; j < span_cols; ++j)
          mask.at<uint8_t>(r, j) =
              sigma.at<float>(r, (first_col + j) % g.pa_count) > float(o.threshold_sigma) ? 255 : 0;
      cv::Mat labels;
      cv::connectedComponents(mask, labels, 8, CV_32S);
      // The labels at the track's point: its band of PA, from kOffLineRows rows below it up.
      std::vector<uint8_t> mine;
      const int point_row = int(std::lround((p.height_rs - g.height_rs(0)) / step));
      for (int j = 0; j < span_cols; ++j) {
        const double d = std::abs(std::remainder(g.pa_deg((first_col + j) % g.pa_count) - p.pa_deg, 360.0));
        if (d > o.track_half_width_deg) continue;
        for (int r = std::max(0, point_row - int(kOffLineRows)); r <= std::min(cap_row, point_row + 1); ++r) {
          const int label = labels.at<int>(r, j);
          if (label <= 0) continue;
          if (size_t(label) >= mine.size()) mine.resize(size_t(label) + 1, 0);
          mine[size_t(label)] = 1;
        }
      }
      bool any = false;
      auto& edge = late.leading_edge_rs[size_t(p.frame)];
      for (int j = 0; j < span_cols; ++j)
        for (int r = cap_row; r >= std::max(0, rows.lo); --r) {
          const int label = labels.at<int>(r, j);
          if (label > 0 && size_t(label) < mine.size() && mine[size_t(label)]) {
            edge[size_t((first_col + j) % g.pa_count)] = float(g.height_rs(r));
            any = true;
            break;
          }
        }
      if (any) last = p.frame;
    }
    late.last_frame = last;
  }
}

// Step 6, no points of two CMEs in one front: once a later front has started (its
// origin, or its onset when it has none), an earlier front's leading edges inside the
// later one's span (± kSpanMarginDeg) may be the later one's — the threshold joins two
// fronts that meet into one region, and a faint later front shows there before its own
// chain begins — so they are dropped from the earlier front (its span, central PA and
// last frame recomputed from what is left). When the later front is faster on the sky
// (a follower), an edge that lies above it — above its track's straight line carried
// through that frame and above its own edge near that PA there, by more than kOffLineRows
// rows — is the earlier front's own and stays: a faster CME following a slower one in the
// same sky rises below it, and without its edges there the earlier front's central PA
// would swing to its flanks (by 20° in tests/imaging/front_multi_test.cpp's follower 45°
// from both views). Not under a slower later chain: there the earlier region can hold
// the later CME's own front above the chain (tests/fit/associate_test.cpp, view b, a
// doubtful chain kept: the first CME's central PA went 23° into the second's sky). Its
// track stays (tracked under the later front, above). Fronts by onset.
void keep_fronts_apart(std::vector<Front>& fronts, const PolarSequence& s, const RowRange& rows) {
  constexpr double kSpanMarginDeg = 5.0;
  const PolarGrid& g = s.polar;
  for (size_t e = 0; e < fronts.size(); ++e) {
    Front& early = fronts[e];
    bool changed = false;
    for (size_t l = e + 1; l < fronts.size(); ++l) {
      const Front& late = fronts[l];
      const double from_s = std::isfinite(late.origin_utc_s) ? std::min(late.origin_utc_s, late.onset_utc_s) : late.onset_utc_s;
      const double span = std::fmod(late.pa_to_deg - late.pa_from_deg + 720.0, 360.0) + 2.0 * kSpanMarginDeg;
      const HeightLine line = height_line(late.track), early_line = height_line(early.track);
      const bool follower = line.v > 0.0 && line.v > early_line.v;  // false when either is NaN
      for (int k = early.onset_frame; k <= early.last_frame; ++k) {
        if (s.utc_s[size_t(k)] < from_s) continue;
        // The later front's height in this frame: NaN (every edge in its span dropped)
        // unless it is a follower, faster on the sky than the earlier front.
        const double late_rs = follower ? line.h0 + line.v * (s.utc_s[size_t(k)] - line.t0)
                                        : std::numeric_limits<double>::quiet_NaN();
        auto& mine = early.leading_edge_rs[size_t(k)];
        for (int c = 0; c < g.pa_count; ++c) {
          if (!std::isfinite(mine[size_t(c)])) continue;
          const double near = edge_near(late, k, g.pa_deg(c), 10.0, g);
          const double below = std::isfinite(near) ? std::max(late_rs, near) : late_rs;
          if (mine[size_t(c)] > below + kOffLineRows * g.height_step_rs) continue;  // above the later front: its own
          if (std::fmod(g.pa_deg(c) - late.pa_from_deg + kSpanMarginDeg + 720.0, 360.0) <= span) {
            mine[size_t(c)] = kNaN;
            changed = true;
          }
        }
      }
    }
    if (!changed) continue;
    int last = -1;
    std::vector<uint8_t> occupied(g.pa_count, 0);
    for (int k = early.onset_frame; k <= early.last_frame; ++k)
      for (int c = 0; c < g.pa_count; ++c)
        if (std::isfinite(early.leading_edge_rs[size_t(k)][size_t(c)])) occupied[size_t(c)] = 1, last = k;
    if (last < 0) continue;  // nothing of its own left: keep the front as found (its onset frame stays)
    early.last_frame = last;
    const auto [first_col, span_cols] = covering_arc(occupied);
    early.width_deg = span_cols * g.pa_step_deg;
    early.pa_from_deg = g.pa_deg(first_col);
    early.pa_to_deg = std::fmod(g.pa_deg(first_col) + (span_cols - 1) * g.pa_step_deg, 360.0);
    early.central_pa_deg = central_pa(early.leading_edge_rs, first_col, span_cols, g.height_rs(rows.lo), g);
  }
}

}  // namespace

Front find_front(const PolarSequence& s, const FrontOptions& o) {
  Front none;
  none.leading_edge_rs.assign(s.frames.size(), std::vector<float>(s.polar.pa_count, kNaN));
  const Scene scene = find_regions(s, o, none.why_not);
  if (!none.why_not.empty()) return none;
  const ChainSearch c = best_chain(scene.regions, [](int, size_t) { return true; }, o, s.polar);
  if (c.end_frame < 0) {
    none.why_not = no_chain_why(o);
    return none;
  }
  Taken taken = nothing_taken(scene);
  Front front = front_from_chain(s, o, scene, chain_members(c), taken);
  if (!track_front(s, o, front)) {
    none.why_not = no_track_why(o);
    return none;
  }
  return front;
}

FrontSet find_fronts(const PolarSequence& s, const FrontOptions& o, const std::vector<int>& keep_doubtful) {
  FrontSet set;
  int doubtful_met = 0;
  const Scene scene = find_regions(s, o, set.why_none);
  if (!set.why_none.empty()) return set;
  const double lowest_rs = s.polar.height_rs(scene.rows.lo);
  std::vector<double> steps;
  for (size_t k = 1; k < s.utc_s.size(); ++k) steps.push_back(s.utc_s[k] - s.utc_s[k - 1]);
  std::nth_element(steps.begin(), steps.begin() + std::ptrdiff_t(steps.size() / 2), steps.end());
  const double cadence_s = steps.empty() ? 0.0 : steps[steps.size() / 2];
  Taken taken = nothing_taken(scene);
  for (int tries = 0; tries < o.max_candidates && int(set.fronts.size()) < o.max_fronts; ++tries) {
    const ChainSearch c = best_chain(scene.regions, [&](int k, size_t i) { return !taken[k][i]; }, o, s.polar);
    if (c.end_frame < 0) break;
    const auto members = chain_members(c);
    Front front = front_from_chain(s, o, scene, members, taken);
    // After the strongest: a new CME rises into the field from below — its first region
    // reaches down to within new_front_from_rs of the lowest height examined (or the
    // window opened on it) — and one in the sky of a CME already found starts later than
    // it (more than companion_onset_frames): a piece of an earlier front that the
    // threshold split off starts with it, high in the field.
    // A later front is tracked under those found so far, so that its origin is its own.
    std::vector<const Front*> found;
    for (const Front& f : set.fronts) found.push_back(&f);
    std::string refused;
    const std::vector<double> ceiling = ceiling_under(front, found, s, front.central_pa_deg);
    if (!track_front(s, o, front, ceiling)) refused = "no front can be followed outward along it";
    for (const Front& other : set.fronts) {
      if (!refused.empty() || !near_in_sky(front, other, o.near_pa_deg)) continue;
      const std::vector<TrackPoint>& track = front.track;
      int from = split_from_earlier(track, other, o.same_origin_cadences * cadence_s, o);
      if (from < 0)
        from = cut_wake_head(track, other, o.same_origin_cadences * cadence_s, kOffLineRows * s.polar.height_step_rs, o);
      if (from < 0) continue;
      for (int k = front.onset_frame; k < from; ++k)
        std::fill(front.leading_edge_rs[size_t(k)].begin(), front.leading_edge_rs[size_t(k)].end(), kNaN);
      front.onset_frame = from;
      front.onset_utc_s = s.utc_s[size_t(from)];
      if (!track_front(s, o, front, ceiling)) refused = "no front can be followed outward along it";
      break;
    }
    if (refused.empty() && !set.fronts.empty()) {
      const Region& first = scene.regions[members.front().first][members.front().second];
      if (front.onset_frame > 0 && s.polar.height_rs(first.row_lo) > lowest_rs + o.new_front_from_rs)
        refused = "its first region lies high in the field";
      for (const Front& other : set.fronts) {
        if (!refused.empty() || std::abs(front.origin_utc_s - other.origin_utc_s) > o.same_origin_cadences * cadence_s)
          continue;  // (a NaN origin compares false: not told apart)
        const double d = std::fmod(std::abs(front.central_pa_deg - other.central_pa_deg), 360.0);
        if (near_in_sky(front, other, o.near_pa_deg)) refused = "it moves with a CME already found, in the same sky";
        else if (std::min(d, 360.0 - d) >= o.across_pa_deg) refused = "it is the far side of a CME already found";
      }
      for (const Front& other : set.fronts)
        if (refused.empty() && near_in_sky(front, other, o.near_pa_deg) &&
            trails(front, other, o.same_origin_cadences * cadence_s, s))
          refused = "it trails a CME already found, below it in the same sky";
      bool doubtful = false;
      for (const Front& other : set.fronts) {
        if (!refused.empty() || !near_in_sky(front, other, o.near_pa_deg)) continue;
        const Wake wake = in_wake(front, other, o.same_origin_cadences * cadence_s);
        if (wake == Wake::part) refused = "it follows a faster CME already found, below its leading edge, in the same sky";
        doubtful = doubtful || wake == Wake::doubtful;
      }
      if (refused.empty() && doubtful) {
        const int ordinal = doubtful_met++;
        if (std::find(keep_doubtful.begin(), keep_doubtful.end(), ordinal) == keep_doubtful.end()) {
          set.doubtful.push_back(front);
          refused = "it follows a faster CME already found, below its leading edge, in the same sky";
        }
      }
    }
    if (refused.empty()) set.fronts.push_back(std::move(front));
    else ++set.refused_chains;
  }
  if (set.fronts.empty()) {
    set.why_none = set.refused_chains > 0 ? no_track_why(o) : no_chain_why(o);
    return set;
  }
  if (set.fronts.size() > 1) {
    // Step 5 again, each front under the others: where another front's leading edge lies
    // above this one's in the track's PA band, the track may not climb onto it — its
    // ceiling is midway between the two edges (a later CME behind an earlier one).
    for (size_t f = 0; f < set.fronts.size(); ++f) {
      std::vector<const Front*> others;
      for (size_t q = 0; q < set.fronts.size(); ++q)
        if (q != f) others.push_back(&set.fronts[q]);
      const std::vector<double> ceiling = ceiling_under(set.fronts[f], others, s, set.fronts[f].central_pa_deg);
      if (!ceiling.empty()) track_front(s, o, set.fronts[f], ceiling);
    }
    std::sort(set.fronts.begin(), set.fronts.end(),
              [](const Front& a, const Front& b) { return a.onset_utc_s < b.onset_utc_s; });
    follow_through_merge(set.fronts, s, o, scene.rows);
    keep_fronts_apart(set.fronts, s, scene.rows);
  }
  return set;
}

}  // namespace occulta::imaging
