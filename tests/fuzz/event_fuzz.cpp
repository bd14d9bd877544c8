// tests/fuzz/event_fuzz.cpp — libFuzzer target: fit/event.cpp read_event on any bytes.
// The event's globs are expanded beside the file, in the harness's own scratch folder.
#include "fit/event.hpp"
#include "tests/fuzz/json_fuzz.hpp"

OCCULTA_JSON_FUZZ_TARGET("fuzz.event.json", occulta::fit::read_event)
