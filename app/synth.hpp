// app/synth.hpp — `occulta synth SCENARIO --out DIR`: synthetic observations of a
// scenario of known truth (fit/synth.hpp), with a progress line while it renders.
#pragma once

#include <iosfwd>
#include <string>

namespace occulta::app {

struct SynthOptions {
  std::string scenario;
  std::string out_dir;
  bool quiet = false;
};

int synth(const SynthOptions& options, std::ostream& out, std::ostream& err);

}  // namespace occulta::app
