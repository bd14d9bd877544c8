// app/demo.hpp — `occulta demo`: the main job on the committed sample event, as far as
// occulta goes today: it reads the sample's event file and inspects every frame of every
// view (a summary per view: frames, time span, cadence, observer, scale), then measures
// the event (`measure`) and prints what it found beside the scenario's truth.
#pragma once

#include <iosfwd>
#include <string>

namespace occulta::app {

struct DemoOptions {
  std::string sample_dir = "sample_frames";  // holds one *.event.json and its views' folders
  std::string out_dir = "demo-out";          // where measure writes
};

int demo(const DemoOptions& options, std::ostream& out, std::ostream& err);

}  // namespace occulta::app
