// imaging/front.hpp — the CME in one view's polar running differences: where it is
// (PA span, central PA, sky width), when it starts (onset frame), its leading edge per PA
// per frame, and a track of its front over time along the central PA.
//
// Input: a PolarSequence (timeheight.hpp) of running differences in units of σ̂ per ring
// of height (difference.hpp, chain.hpp): rows = heights in R☉ from Sun centre in the plane
// of the sky (row 0 lowest), columns = PA in degrees counter-clockwise from solar north
// through east, times UTC seconds since 2000-01-01 (the later frame of each difference).
// NaN = no data (occulter, field stop, missing blocks); such pixels are never significant.
//
// Method (ours, built from common practice):
//  1. Each frame is smoothed (Gaussian, a few rows × ~1° of PA, wrapping through north)
//     and renormalised per ring, so one threshold in σ holds at every height; pixels above
//     `threshold_sigma` (positive only: a front's new position brightens) form regions
//     (cv::connectedComponentsWithStats, 8-connected, joined across the 0/360 seam). Rows
//     within `inner_margin_rs` of the occulter edge or `outer_margin_rs` of the field stop
//     are left out: registration residuals of the steep inner corona live there.
//  2. A region counts in a frame when it spans ≥ min_height_extent_rs, ≥ min_pa_extent_deg
//     and ≥ min_pixels — cosmic-ray residuals and noise specks do not.
//  3. Regions of consecutive frames are linked when their PA ranges overlap and the later
//     one's outer edge is not lower (within one row); the best-scoring chain (Σ σ over its
//     pixels) of ≥ min_frames frames whose outer edge rises by ≥ min_rise_rs is the CME.
//     Static streamers cancel in running differences; a single-frame blob has no chain.
//  3b. Halos: other chains that move with the best one — apart from it in PA, their
//     outer edge at its height (within companion_height_fraction) in ≥ min_frames of its
//     frames, starting within companion_onset_frames of it — are the same front seen
//     round the occulter, and join it. With them, a front
//     on both sides of the Sun (span over 180°) `encircles`: the CME runs along the line of
//     sight (fit/shell_fit then treats the view as a halo).
//  4. Leading edge per PA per frame: the outermost row of the chain's region in each PA.
//     The span is the arc covering every PA the chain's regions occupy; the central PA is
//     the PA centroid of the sky the front swept through within the span: each PA weighted
//     by the area (∫ r dr) between the lowest height examined and the highest leading edge
//     there. Not the span's middle: the span's ends are where the front is faintest (flanks
//     just above the occulter lose to the threshold, a bright sharp side gains the sheath's
//     thickness), and they would move the middle by 5–15° for a tilted shell.
//  5. Track: dynamic programming over the time–height profile (band_profile median over
//     ±track_half_width_deg about the central PA) from the onset frame on; a point's score
//     is its σ, heights never fall from one frame to the next, and speeds above
//     jump_free_km_s cost jump_penalty_per_1000_km_s (per 1000 km/s above), those above
//     max_speed_km_s are impossible. The path runs along the front's bright band; each
//     point is then moved to the band's outer side, where it falls to edge_fraction × its
//     peak, and dropped — censored, counted in TrackCensoring — where the band has no
//     data there (a missing block), never falls to that level below the field stop, or
//     peaks on the lowest usable row.
//  6. More than one CME (find_fronts): steps 3–5 again over the regions no front has
//     taken yet, strongest chain first. A later chain is a CME of its own when it rises
//     into the field from below (its first region reaches down to within
//     new_front_from_rs of the lowest height examined, or the window opened on it), and,
//     where its span lies within near_pa_deg of a CME already found, its origin differs
//     from that CME's by more than same_origin_cadences × the median cadence. The origin
//     is where a straight line through its track (tracked under the fronts found so far,
//     as below) meets Sun centre (h = 0): the parts of one self-similarly expanding front (legs, inner
//     loops the threshold splits off, heights ∝ the front's) share it, while a CME
//     launched later — even through the first's wake — starts later (our construction,
//     from the self-similar expansion common practice assumes). A chain with the same
//     origin as a CME found on the far side of the Sun (central PAs ≥ across_pa_deg
//     apart) is that CME's other side, a halo's, that step 3b did not join: in one view
//     two CMEs launched together on opposite sides cannot be told from one halo, and are
//     taken as one. A chain in the sky of a CME found already that is seen after it, lies
//     below its leading edge in every frame of its track, yet points to an earlier origin
//     trails it: the shell's inner rim or a leg under the front, whose short faint track
//     rises too slowly — a CME launched earlier and overtaken by the one above it would be
//     the interaction the model leaves out. A later chain that begins on a piece of an
//     earlier front (its first track points share that front's origin) or on a slower
//     structure in its wake (its first track points lie above the straight line through
//     the rest by more than 3 rows, the rest on it) is cut where the new CME begins: its
//     onset is the first frame of the rest. Each front is
//     then tracked under the others: where another front's leading edge lies above its
//     own in the track's PA band, its track may not climb above the midway height. A
//     later front whose chain ends while an earlier one goes on above it (the threshold
//     joined its sheath to the earlier one's legs, in a region the earlier chain took) is
//     followed on through that region while its track goes on. Once a later front has
//     started, an earlier front's edges inside its span are dropped unless they lie above
//     it (its track's line and its own edge there) by more than 3 rows.
// Every threshold below is our choice, tuned on `occulta synth` events (front_test.cpp).
#pragma once

#include <string>
#include <vector>

#include "imaging/timeheight.hpp"

namespace occulta::imaging {

struct FrontOptions {
  double threshold_sigma = 3.5;        // significance of the smoothed, renormalised difference
  double smooth_rows = 1.0;            // Gaussian σ across heights, in rows
  double smooth_pa_deg = 1.0;          // Gaussian σ across PA, in degrees
  double inner_margin_rs = 0.3;        // left out above the lowest height with data
  double outer_margin_rs = 0.2;        // left out below the highest height with data
  double min_height_extent_rs = 0.5;   // a region's radial extent
  double min_pa_extent_deg = 6.0;      // a region's PA extent
  int min_pixels = 40;                 // a region's area, polar pixels
  int min_frames = 3;                  // consecutive frames in a chain
  double min_rise_rs = 0.3;            // rise of the outer edge over the chain
  double track_half_width_deg = 2.0;   // PA band of the time–height profile
  double jump_free_km_s = 3000.0;      // jumps up to this speed cost nothing
  double jump_penalty_per_1000_km_s = 5.0;  // σ per 1000 km/s above jump_free_km_s
  double max_speed_km_s = 5000.0;      // faster is not a CME front
  double edge_fraction = 0.75;         // the leading edge: where the front's band falls to this × its peak
  double companion_height_fraction = 0.15;  // step 3b: a companion chain's outer edge, × height above the lowest row
  int companion_onset_frames = 2;      // step 3b: a companion starts within this many frames of the front
  double new_front_from_rs = 1.5;      // step 6: a later CME's first region reaches down to this above the lowest row
  double near_pa_deg = 30.0;           // step 6: spans this close are the same sky
  double same_origin_cadences = 1.5;   // step 6: origins this close (× median cadence) are one front's
  double across_pa_deg = 120.0;        // step 6: central PAs this far apart are opposite sides of the Sun
  int max_fronts = 4;                  // step 6: CMEs kept per window at most
  int max_candidates = 8;              // step 6: chains examined at most
};

struct TrackPoint {
  int frame = 0;             // index into the sequence
  double utc_s = 0.0;
  double pa_deg = 0.0;
  double height_rs = 0.0;
  double sigma = 0.0;        // the band-median running difference there, σ
};

// Frames whose leading edge the track could not measure, by why (step 5): the front's
// band does not fall to edge_fraction × its peak below the outer field stop (the edge
// lies at or beyond it), runs into a missing block (a data gap), or peaks on the lowest
// usable row (behind the occulter still). Such frames add no point: a height pinned at
// the field stop is not the front's height, and would bend the law (issue 11).
struct TrackCensoring {
  int at_field_stop = 0;
  int at_data_gap = 0;
  int behind_occulter = 0;
  int total() const { return at_field_stop + at_data_gap + behind_occulter; }
};

struct Front {
  bool found = false;
  std::string why_not;       // one sentence when not found
  int onset_frame = -1;      // first frame where the region is significant
  double onset_utc_s = 0.0;
  int last_frame = -1;       // last frame of the chain
  // PA span, counter-clockwise from pa_from_deg to pa_to_deg, both in [0, 360); across
  // north pa_to_deg < pa_from_deg (e.g. 350 → 20).
  double pa_from_deg = 0.0, pa_to_deg = 0.0;
  double width_deg = 0.0;          // sky width: the span's extent
  double central_pa_deg = 0.0;     // where the CME is centred: the swept sky's PA centroid (step 4)
  double outermost_pa_deg = 0.0;   // PA of the highest leading edge in the chain's frames
  int companion_regions = 0;       // regions of other chains moving with it (step 3b)
  // When a straight line through its track's heights meets Sun centre (step 6); NaN
  // when the track does not rise.
  double origin_utc_s = 0.0;
  bool encircles = false;          // with them, fronts on both sides of the Sun: a halo-like view
  // [frame][PA column]: height in R☉ of the region's outermost significant pixel, NaN where
  // the region is absent (all NaN outside onset_frame..last_frame).
  std::vector<std::vector<float>> leading_edge_rs;
  std::vector<TrackPoint> track;   // significant points only, from the onset frame on
  TrackCensoring track_censored;   // frames `track` left out, by why
};

// The whole analysis (steps 1–5) for the strongest CME alone. Expects ≥ 2 frames, all on
// sequence.polar.
Front find_front(const PolarSequence& sequence, const FrontOptions& options = {});

// Every CME in the window (steps 1–6), by onset (earliest first). The front find_front
// finds is among them, with the same track unless another front lies above it; where the
// strongest chain has no track, find_fronts goes on to the next ones.
//
// A chain in a front's wake that this view alone cannot tell from a slower CME launched
// later under it (front.cpp in_wake: later, slower, below the front's line, but neither
// pointing to its origin nor keeping its pace) is refused and listed in `doubtful`, as
// tracked; its ordinal is its index there. The other views decide (fit/associate.hpp
// doubtful_stands_alone): find_fronts again with its ordinal in `keep_doubtful` keeps it
// as a front of its own (the fronts are then tracked under it, and kept apart from it).
struct FrontSet {
  std::vector<Front> fronts;
  std::string why_none;     // one sentence when fronts is empty
  int refused_chains = 0;   // chains that moved outward but were not a CME of their own (step 6), doubtful ones included
  std::vector<Front> doubtful;  // refused chains in a front's wake that may be CMEs of their own
};
FrontSet find_fronts(const PolarSequence& sequence, const FrontOptions& options = {},
                     const std::vector<int>& keep_doubtful = {});

// Step 5 alone, e.g. at a PA the analyst chose: frames from_frame.. of the sequence.
// Frames it could not measure are counted in `censored` when given. ceiling_rs (per frame
// of the sequence, R☉; none when empty or +∞): the track stays below it (step 6).
std::vector<TrackPoint> follow_track(const PolarSequence& sequence, double pa_deg, int from_frame,
                                     const FrontOptions& options = {}, TrackCensoring* censored = nullptr,
                                     const std::vector<double>& ceiling_rs = {});

// Step 6's ceiling for a track of `front` along `pa_deg`: per frame of the sequence, where
// another front's leading edge lies above this one's (both within ±10° of pa_deg), midway
// between the two (R☉; +∞ where none lies above); empty when none does in any frame.
std::vector<double> ceiling_under(const Front& front, const std::vector<const Front*>& others,
                                  const PolarSequence& sequence, double pa_deg);

// Whether a height at `pa_deg` in frame `frame` lies where an edge can be measured: at
// least `margin_rs` inside the frame's data along that PA band (above the lowest row
// with data, below the highest, with no missing rows between it and either). Sets `why`
// ("at the field stop", "at a data gap", "behind the occulter") when not. The analyst's
// points obey the same rule as the automatic track (issue 11).
bool height_measurable(const PolarSequence& sequence, int frame, double pa_deg, double height_rs, double margin_rs,
                       std::string& why);

}  // namespace occulta::imaging
