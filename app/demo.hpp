// app/demo.hpp — `occulta demo`: the main job on the committed sample event, as far as
// occulta goes today. Until sample_frames/ exists it writes a frame of its own (a
// smooth model corona behind an occulter, with full WCS and observer keywords) and
// inspects that.
#pragma once

#include <iosfwd>
#include <string>

namespace occulta::app {

struct DemoOptions {
  std::string out_dir = "demo-out";
  std::string sample_dir = "sample_frames";
};

int demo(const DemoOptions& options, std::ostream& out, std::ostream& err);

}  // namespace occulta::app
