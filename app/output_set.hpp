// app/output_set.hpp — where a verb's outputs may go, and how one run's outputs replace
// the previous run's in the same --out folder.
//
// Outputs never land where the inputs' globs can find them: a run whose outputs would
// match an event view's glob (e.g. `maps --out` equal to the event's folder, writing
// east/polar.fits where "east/*.fits" reads frames) or name an input file is refused
// before any work, so the next run reads the same frames.
//
// A run's outputs form a set closed by a seal (result.json for measure, arrival.json for
// forecast, the event file for synth), written last. Before writing anything a run
// removes the previous run's seal, then the previous run's other outputs (by their known
// names only) and any temporaries a killed run left. So a seal always sits beside the
// outputs of its own run, and a folder without one holds no complete-looking result.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include "fit/event.hpp"

namespace occulta::app {

// Refuses (InputError naming `option`) when a path in `outputs` matches one of the event's
// view globs or is one of its input files. Paths are compared absolute and normalised.
void check_outputs_outside_inputs(const fit::Event& event, const std::vector<std::filesystem::path>& outputs,
                                  const std::string& option);

// What a verb writes into its --out folder.
struct OutputNames {
  std::string seal;                      // written last; "" for none
  std::vector<std::string> top;          // other files in the folder itself (fnmatch patterns)
  std::vector<std::string> per_view;     // files in each view's subfolder (fnmatch patterns)
};

// Removes the previous run's outputs from `out_dir` (the seal first), in the folder and in
// the subfolders named in `views` and in the previous seal's "views"[].name, and the
// temporaries of killed runs there. Only regular files with the given names are touched.
void retire_previous_outputs(const std::filesystem::path& out_dir, const OutputNames& names,
                             const std::vector<std::string>& views);

}  // namespace occulta::app
