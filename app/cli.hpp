// app/cli.hpp — the command line: one verb per job, each a function of its options.
//
// Exit codes, for every verb: 0 done and every input usable, 1 some input had a problem
// (reported; done as far as it could, or refused before any work), 2 bad usage (unknown
// verb or option, missing argument, an option's value out of range or malformed — any
// fault whose InputError source is an option name "--…").
// Messages on stderr, one sentence each, one prefix style: "occulta: usage: …",
// "occulta: error: …" (stopped), "occulta: problem: …" (went on), "occulta: note: …".
#pragma once

namespace occulta::app {

int run(int argc, char** argv);

}  // namespace occulta::app
