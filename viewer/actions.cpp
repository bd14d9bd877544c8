// viewer/actions.cpp — see actions.hpp.
#include "viewer/actions.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>

namespace occulta::viewer {
namespace {

constexpr std::array kDisplays{Display::calibrated, Display::running_difference, Display::base_difference,
                               Display::nrgf, Display::polar};
constexpr std::array<std::string_view, 5> kNames{"calibrated", "running_difference", "base_difference", "nrgf",
                                                 "polar"};
constexpr std::array<std::string_view, 5> kLabels{"calibrated", "running difference", "base difference", "NRGF",
                                                  "polar"};

template <class... F>
struct Overloaded : F... {
  using F::operator()...;
};
template <class... F>
Overloaded(F...) -> Overloaded<F...>;  // clang 14 does not deduce aggregates' arguments yet

int last_frame(const WindowState& s) { return std::max(0, int(s.timeline_utc_s.size()) - 1); }

}  // namespace

std::span<const Display> displays() { return kDisplays; }
std::string_view display_name(Display display) { return kNames[std::size_t(display)]; }
std::string_view display_label(Display display) { return kLabels[std::size_t(display)]; }
std::optional<Display> display_named(std::string_view name) {
  for (std::size_t i = 0; i < kNames.size(); ++i)
    if (kNames[i] == name) return kDisplays[i];
  return std::nullopt;
}

double displayed_time(const WindowState& state) {
  if (state.timeline_utc_s.empty()) return std::numeric_limits<double>::quiet_NaN();
  return state.timeline_utc_s[std::size_t(std::clamp(state.frame, 0, last_frame(state)))];
}

void apply(WindowState& s, const Action& a) {
  std::visit(
      Overloaded{
          [&](const action::Frame& f) { s.frame = std::clamp(f.index, 0, last_frame(s)); },
          [&](const action::Step& f) {
            const int n = last_frame(s) + 1;
            if (f.wrap) s.frame = ((s.frame + f.by) % n + n) % n;
            else s.frame = std::clamp(s.frame + f.by, 0, n - 1);
          },
          [&](const action::ShowDisplay& d) { s.display = d.mode; },
          [&](const action::Focus& f) {
            const bool known = std::find(s.views.begin(), s.views.end(), f.view) != s.views.end();
            s.focus = known ? f.view : std::string();
          },
          [&](const action::Contrast& c) {
            // A range of at least 0.1 σ, limits within ±1000 σ, in order.
            double lo = std::isfinite(c.lo_sigma) ? std::clamp(c.lo_sigma, -1000.0, 1000.0) : s.sigma_lo;
            double hi = std::isfinite(c.hi_sigma) ? std::clamp(c.hi_sigma, -1000.0, 1000.0) : s.sigma_hi;
            if (lo > hi) std::swap(lo, hi);
            if (hi - lo < 0.1) hi = lo + 0.1;
            s.sigma_lo = lo;
            s.sigma_hi = hi;
          },
          [&](const action::Colours& c) { s.colours = c.table; },
          [&](const action::Play&) { s.playing = true; },
          [&](const action::Pause&) { s.playing = false; },
          [&](const action::Resize& r) {
            s.width = std::clamp(r.width, kMinWindowPx, kMaxWindowPx);
            s.height = std::clamp(r.height, kMinWindowPx, kMaxWindowPx);
          },
          [&](const action::HoverAt& h) {
            if (std::isfinite(h.x_rs) && std::isfinite(h.y_rs)) s.hover = Hover{h.view, h.x_rs, h.y_rs};
          },
          [&](const action::Leave&) { s.hover.reset(); },
          [&](const action::Quit&) { s.quit = true; },
          [&](const action::Timeline& t) {
            // Keep the displayed time: the new timeline's nearest frame to it.
            const double now = displayed_time(s);
            s.timeline_utc_s = t.utc_s;
            std::sort(s.timeline_utc_s.begin(), s.timeline_utc_s.end());
            s.timeline_utc_s.erase(std::unique(s.timeline_utc_s.begin(), s.timeline_utc_s.end()),
                                   s.timeline_utc_s.end());
            s.frame = 0;
            if (std::isfinite(now))
              for (int i = 0; i <= last_frame(s); ++i)
                if (std::abs(s.timeline_utc_s[std::size_t(i)] - now) <
                    std::abs(s.timeline_utc_s[std::size_t(s.frame)] - now))
                  s.frame = i;
          },
      },
      a);
}

}  // namespace occulta::viewer
