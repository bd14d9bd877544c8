// viewer/present.hpp — the analyst's window on a display: a GLFW window, GLFW's input wired
// to Dear ImGui through the GLFW platform backend of Debian's libimgui, every frame drawn by
// our rasterizer (viewer/raster.hpp) and shown
//  - as an OpenGL texture on one quad, where an OpenGL ≥ 2.1 context can be had (Mesa's
//    llvmpipe suffices; GL entry points are looked up through GLFW, so nothing links libGL);
//  - else with plain X11 image puts (XPutImage) on a GLFW_NO_API window (a display without
//    GLX, as over ssh -X).
// It says on stderr which path is in use. With no display at all it says so in one
// sentence that points to --snapshot, and returns 1.
//
// The views load on a worker thread (pictures.hpp Loader) while the window stays
// responsive, with progress shown; `script` is applied once they have loaded. Playing
// steps one frame each kPlayStepS, wrapping at the end. Every fit the analyst asks for
// (the automatic one gives the automatic track to show and adopt) runs on a worker
// thread; the window keeps drawing meanwhile. Colourings and shell outlines are kept in
// the loop's WindowCache (window_cache.hpp), and after each frame is shown the next and the
// previous time's are made ahead. Points changed and not saved are
// written every kAutosaveS to the autosave file (autosave_path), and quitting with them
// unsaved asks first.
#pragma once

#include <iosfwd>
#include <vector>

#include "viewer/actions.hpp"
#include "viewer/pictures.hpp"
#include "viewer/session.hpp"

namespace occulta::viewer {

inline constexpr double kPlayStepS = 0.25;
inline constexpr double kAutosaveS = 10.0;

// Where unsaved points are kept: beside the last saved track (its name + ".autosave"),
// else "<event id>.autosave.track.json" in the working folder.
std::string autosave_path(const WindowState& state);

// Runs the window until it is closed (or a Quit action); 0, or 1 when no window can be opened.
int present(WindowState state, std::vector<ViewSource> sources, const std::vector<Action>& script, const Session& session,
            std::ostream& err);

}  // namespace occulta::viewer
