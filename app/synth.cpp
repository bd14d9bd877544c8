#include "app/synth.hpp"

#include <chrono>
#include <cstdio>
#include <ostream>

#include "fit/scenario.hpp"
#include "fit/synth.hpp"

namespace occulta::app {

int synth(const SynthOptions& options, std::ostream& out, std::ostream& err) {
  // Faults are InputErrors, reported by app/cli.cpp in the one message style.
  const fit::Scenario scenario = fit::read_scenario(options.scenario);
  const auto started = std::chrono::steady_clock::now();
  const auto progress = [&](int done, int total) {
    if (options.quiet) return;
    const double elapsed = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
    char line[160];
    std::snprintf(line, sizeof line, "\rsynth: %d/%d frames, %.1f s", done, total, elapsed);
    err << line << (done == total ? "\n" : "") << std::flush;
  };
  const fit::SynthResult result = fit::synthesize(scenario, options.out_dir, progress);
  out << "synth: " << result.frames.size() << " frames in " << scenario.observers.size() << " views\n"
      << "  event: " << result.event_file.string() << "\n"
      << "  truth: " << result.truth_file.string() << "\n";
  return 0;
}

}  // namespace occulta::app
