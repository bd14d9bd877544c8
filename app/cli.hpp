// app/cli.hpp — the command line: one verb per job, each a function of its options.
//
// Exit codes, for every verb: 0 done and every input usable, 1 done but some input had a
// problem (reported), 2 bad usage (unknown verb or option, missing argument).
#pragma once

namespace occulta::app {

int run(int argc, char** argv);

}  // namespace occulta::app
