// imaging/front.cpp — see front.hpp for the method and its conventions.
#include "imaging/front.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <map>
#include <numeric>

#include <opencv2/imgproc.hpp>

#include "imaging/constants.hpp"
#include "imaging/difference.hpp"

namespace occulta::imaging {
namespace {

constexpr double kKmPerRs = 695700.0;  // IAU 2015 nominal solar radius (Prša et al. 2016)
constexpr float kNaN = std::numeric_limits<float>::quiet_NaN();

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
                                     TrackCensoring* censored) {
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
    for (int i = 0; i < n; ++i) {
      const float x = profile[rows[i]];
      v[k][i] = std::isfinite(x) ? std::clamp(x, -10.0f, 50.0f) : 0.0f;
      has_data[k][i] = std::isfinite(x);
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

Front find_front(const PolarSequence& s, const FrontOptions& o) {
  Front front;
  const PolarGrid& g = s.polar;
  const int frames = int(s.frames.size());
  front.leading_edge_rs.assign(frames, std::vector<float>(g.pa_count, kNaN));
  const RowRange rows = usable_rows(s, o);
  if (rows.hi < rows.lo) {
    front.why_not = "no CME found: the frames have no heights with data clear of the occulter and field stop.";
    return front;
  }

  // Steps 1–2: significant regions per frame.
  std::vector<std::vector<Region>> regions(frames);
  int any = 0;
  for (int k = 0; k < frames; ++k) {
    regions[k] = frame_regions(smooth_sigma(s.frames[k], o, g), k, rows, o, g);
    any += int(regions[k].size());
  }
  if (any == 0) {
    front.why_not = "no CME found: no frame has a significant region large enough (" +
                    std::to_string(o.threshold_sigma).substr(0, 4) + "σ).";
    return front;
  }

  // Step 3: chains of regions over consecutive frames, best Σ σ; predecessors must overlap
  // in PA and have an outer edge not above this one's by more than a row.
  struct Link {
    double total = 0.0;
    int length = 1;
    int prev = -1;
    int first_row_hi = 0;
  };
  std::vector<std::vector<Link>> links(frames);
  int best_frame = -1, best_index = -1;
  double best_total = 0.0;
  for (int k = 0; k < frames; ++k) {
    links[k].resize(regions[k].size());
    for (size_t i = 0; i < regions[k].size(); ++i) {
      const Region& r = regions[k][i];
      Link link{r.score, 1, -1, r.row_hi};
      if (k > 0)
        for (size_t j = 0; j < regions[k - 1].size(); ++j) {
          const Region& p = regions[k - 1][j];
          if (r.row_hi + 1 < p.row_hi || !overlaps(r, p)) continue;
          const Link& pl = links[k - 1][j];
          if (pl.total + r.score > link.total)
            link = Link{pl.total + r.score, pl.length + 1, int(j), pl.first_row_hi};
        }
      links[k][i] = link;
      const bool rises = (r.row_hi - link.first_row_hi) * g.height_step_rs >= o.min_rise_rs - 1e-9;
      if (link.length >= o.min_frames && rises && link.total > best_total) {
        best_total = link.total;
        best_frame = k;
        best_index = int(i);
      }
    }
  }
  if (best_frame < 0) {
    front.why_not = "no CME found: no significant region persists over " + std::to_string(o.min_frames) +
                    " consecutive frames while moving outward.";
    return front;
  }

  // The chain, oldest first.
  std::vector<const Region*> chain;
  for (int k = best_frame, i = best_index; i >= 0; i = links[k][i].prev, --k) chain.push_back(&regions[k][i]);
  std::reverse(chain.begin(), chain.end());
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
  // rows). Its regions join the chain's (up to three such chains).
  std::vector<const Region*> joined;
  {
    std::map<int, const Region*> main_at;  // frame → the chosen chain's region there
    for (const Region* r : chain) main_at[r->frame] = r;
    std::vector<std::vector<uint8_t>> taken(frames);
    for (int k = 0; k < frames; ++k) {
      taken[k].assign(regions[k].size(), 0);
      for (size_t i = 0; i < regions[k].size(); ++i)
        if (auto m = main_at.find(k); m != main_at.end() && overlaps(regions[k][i], *m->second)) taken[k][i] = 1;
    }
    const auto matches = [&](const Region& r) {
      const auto m = main_at.find(r.frame);
      if (m == main_at.end()) return false;
      const double above_rows = std::max(0, m->second->row_hi - rows.lo);
      const double tolerance = std::max(3.0, o.companion_height_fraction * above_rows);
      return std::abs(r.row_hi - m->second->row_hi) <= tolerance;
    };
    for (int round = 0; round < 3; ++round) {
      std::vector<std::vector<Link>> cl(frames);
      int end_frame = -1, end_index = -1;
      double end_total = 0.0;
      for (int k = 0; k < frames; ++k) {
        cl[k].assign(regions[k].size(), Link{});
        for (size_t i = 0; i < regions[k].size(); ++i) {
          const Region& r = regions[k][i];
          if (taken[k][i] || !matches(r)) {
            cl[k][i].length = 0;  // not a companion's link
            continue;
          }
          Link link{r.score, 1, -1, r.row_hi};
          if (k > 0)
            for (size_t j = 0; j < regions[k - 1].size(); ++j) {
              const Region& q = regions[k - 1][j];
              const Link& ql = cl[k - 1][j];
              if (ql.length == 0 || r.row_hi + 1 < q.row_hi || !overlaps(r, q)) continue;
              if (ql.total + r.score > link.total) link = Link{ql.total + r.score, ql.length + 1, int(j), ql.first_row_hi};
            }
          cl[k][i] = link;
          const bool rises = (r.row_hi - link.first_row_hi) * g.height_step_rs >= o.min_rise_rs - 1e-9;
          if (link.length >= o.min_frames && rises && link.total > end_total) {
            end_total = link.total;
            end_frame = k;
            end_index = int(i);
          }
        }
      }
      if (end_frame < 0) break;
      for (int k = end_frame, i = end_index; i >= 0; i = cl[k][i].prev, --k) {
        joined.push_back(&regions[k][i]);
        taken[k][i] = 1;
        // Regions of that frame overlapping the companion are not another companion.
        for (size_t j = 0; j < regions[k].size(); ++j)
          if (overlaps(regions[k][j], regions[k][i])) taken[k][j] = 1;
      }
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

  // Step 5. A region with no front that can be followed outward over min_frames frames
  // is not a CME: a residual of a steep static structure (a streamer's edge moved by
  // pointing jitter) can persist and rise a little, but leaves no significant track.
  front.track = follow_track(s, front.central_pa_deg, front.onset_frame, o, &front.track_censored);
  const std::vector<TrackPoint> outer = follow_track(s, front.outermost_pa_deg, front.onset_frame, o);
  if (int(std::max(front.track.size(), outer.size())) < o.min_frames) {
    Front none;
    none.why_not = "no CME found: a region is significant, but no front can be followed outward over " +
                   std::to_string(o.min_frames) + " frames along it.";
    none.leading_edge_rs = std::move(front.leading_edge_rs);
    for (auto& row : none.leading_edge_rs) std::fill(row.begin(), row.end(), std::numeric_limits<float>::quiet_NaN());
    return none;
  }
  return front;
}

}  // namespace occulta::imaging
