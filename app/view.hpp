// app/view.hpp — `occulta view EVENT|DIR [--snapshot out.png] [--size WxH] [--script
// actions.json] [--median N]`: the analyst's window on an event file or a folder of frames.
//
// Reads the event (fit/event.hpp; a folder groups its frames by observer, as `measure`
// does) and hands the viewer a plain list of views (viewer/pictures.hpp ViewSource). With
// --snapshot, no display is needed: the views are loaded first, the script's actions
// applied in order, and the window drawn once by the software renderer into the PNG.
// Without it, a window opens (viewer/present.hpp); no display → one sentence pointing to
// --snapshot, exit 1.
#pragma once

#include <iosfwd>
#include <string>

namespace occulta::app {

struct ViewOptions {
  std::string input;     // event file or folder of FITS frames
  std::string snapshot;  // PNG to write instead of opening a window
  std::string size = "1280x800";
  std::string script;    // actions to apply first (viewer/script.hpp)
  int median = 5;        // median filter size against cosmic rays (0, 3 or 5), as measure's default
};

int view(const ViewOptions& options, std::ostream& out, std::ostream& err);

}  // namespace occulta::app
