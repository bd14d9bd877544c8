// imaging/sequence.cpp — reading, checking, sorting and de-duplicating one view's frames.
#include "imaging/sequence.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <exception>
#include <optional>
#include <thread>

#include "imaging/constants.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::imaging {

namespace {

constexpr double kSameTimeS = 1e-3;
constexpr double kMaxObserverAngleDeg = 3.0;
constexpr double kMaxObserverDistanceRatio = 0.03;

std::string identity(const Header& header) {
  std::string id;
  for (const char* key : {"OBSRVTRY", "TELESCOP"})
    if (auto text = header.text(key)) id += std::string(key) + "=" + *text + " ";
  return id;
}

std::string join(const std::vector<std::string>& sentences) {
  std::string text;
  for (const auto& s : sentences) text += (text.empty() ? "" : " ") + s;
  return text;
}

}  // namespace

ViewSequence scan_view(const std::string& view, const std::vector<std::filesystem::path>& paths,
                       const std::optional<Observer>& observer) {
  ViewSequence sequence;
  sequence.view = view;
  // The number of frames is the input's (a glob can match anything): bounded before
  // any is read, as everything downstream grows with it (time axes, tracks).
  if (paths.size() > kMaxFramesPerView)
    throw InputError(view, "it has " + std::to_string(paths.size()) + " frames, more than occulta reads in one view (" +
                               std::to_string(kMaxFramesPerView) + "); narrow its globs or the event's window");
  // Each frame's header, read on two threads (the headers are read before anything else
  // can start, so they are on the run's critical path), then taken in the order given, so
  // that frames and problems come out as read one after another. Both libraries allow it:
  // Debian's cfitsio is built reentrant (fits_is_reentrant() is 1; the chain's reads
  // ahead rely on it too), and WCSLIB's header and unit parsers are reentrant Flex
  // scanners (wcspihlex_init, wcsutrnlex_init; geometry.cpp changes no global).
  struct Scanned {
    std::optional<SequenceFrame> frame;
    std::string identity;  // OBSRVTRY/TELESCOP
    std::vector<std::string> notes;  // problems of a usable frame
    std::string fault;               // why the frame is skipped
  };
  std::vector<Scanned> scanned(paths.size());
  const auto scan = [&](std::size_t k) {
    const auto& path = paths[k];
    Scanned& out = scanned[k];
    try {
      const Header header = read_fits_header(path);
      SequenceFrame frame;
      frame.path = path;
      const FrameTime time = read_frame_time(header, path.string());
      frame.utc_s = time.utc_s;
      frame.exposure_s = time.exposure_s;
      if (frame.exposure_s && !(*frame.exposure_s > 0.0))
        throw InputError(path.string(), "its exposure time is not positive");
      frame.geometry = read_geometry(header, path.string(), observer);
      if (frame.geometry.width <= 0 || frame.geometry.height <= 0)
        throw InputError(path.string(), "its header gives no image size");
      frame.header_radii = header_occulter_radii(header);
      if (!frame.exposure_s)
        out.notes.push_back(path.string() + ": it has no EXPTIME or XPOSURE; its pixels are taken as "
                                            "already per second.");
      out.frame = std::move(frame);
      out.identity = identity(header);
    } catch (const std::exception& e) {
      out.fault = std::string(e.what()) + " The frame is skipped.";
    }
  };
  {
    // The second thread takes the odd frames; scan() throws nothing.
    std::thread odd([&] {
      for (std::size_t k = 1; k < paths.size(); k += 2) scan(k);
    });
    for (std::size_t k = 0; k < paths.size(); k += 2) scan(k);
    odd.join();
  }
  std::vector<std::string> identities;
  for (Scanned& s : scanned) {
    if (!s.frame) {
      sequence.problems.push_back(std::move(s.fault));
      continue;
    }
    for (std::string& note : s.notes) sequence.problems.push_back(std::move(note));
    sequence.frames.push_back(std::move(*s.frame));
    identities.push_back(std::move(s.identity));
  }

  // Two observers in one view: the instrument names first, then where they are.
  for (std::size_t k = 1; k < sequence.frames.size(); ++k) {
    const auto& a = sequence.frames.front();
    const auto& b = sequence.frames[k];
    const bool named_apart = !identities[0].empty() && !identities[k].empty() && identities[0] != identities[k];
    const Eigen::Vector3d pa = a.geometry.observer.heeq_p_obs_km(), pb = b.geometry.observer.heeq_p_obs_km();
    const double angle_deg = std::acos(std::clamp(pa.normalized().dot(pb.normalized()), -1.0, 1.0)) * kDegPerRad;
    const double distance_ratio = std::abs(pb.norm() / pa.norm() - 1.0);
    if (named_apart || angle_deg > kMaxObserverAngleDeg || distance_ratio > kMaxObserverDistanceRatio) {
      char what[400];
      if (named_apart) {
        std::snprintf(what, sizeof what, "it holds frames of two observers (%s is %sbut %s is %s)", a.path.c_str(),
                      identities[0].c_str(), b.path.c_str(), identities[k].c_str());
      } else {
        std::snprintf(what, sizeof what,
                      "it holds frames of two observers: %s and %s were seen from places %.1f° apart around the Sun "
                      "and %.1f%% apart in distance; give each observer its own view",
                      a.path.c_str(), b.path.c_str(), angle_deg, 100.0 * distance_ratio);
      }
      throw InputError("view " + view, what);
    }
  }

  // Time order; equal times keep the first given (stable sort), the rest are reported.
  std::stable_sort(sequence.frames.begin(), sequence.frames.end(),
                   [](const SequenceFrame& a, const SequenceFrame& b) { return a.utc_s < b.utc_s; });
  std::vector<SequenceFrame> unique;
  for (auto& frame : sequence.frames) {
    if (!unique.empty() && std::abs(frame.utc_s - unique.back().utc_s) <= kSameTimeS) {
      sequence.problems.push_back(frame.path.string() + ": it has the same time (" +
                                  iso_from_utc_seconds(frame.utc_s) + ") as " + unique.back().path.string() +
                                  "; only the latter is used.");
      continue;
    }
    unique.push_back(std::move(frame));
  }
  sequence.frames = std::move(unique);

  if (sequence.frames.size() < kMinimumFrames) {
    throw InputError("view " + view, "it has " + std::to_string(sequence.frames.size()) + " usable frame" +
                                         (sequence.frames.size() == 1 ? "" : "s") + " of " +
                                         std::to_string(paths.size()) +
                                         "; running differences need at least three" +
                                         (sequence.problems.empty() ? std::string()
                                                                    : " (" + join(sequence.problems) + ")"));
  }
  return sequence;
}

}  // namespace occulta::imaging
