// tests/fuzz/track_fuzz.cpp — libFuzzer target: fit/track.cpp read_track on any bytes.
#include "fit/track.hpp"
#include "tests/fuzz/json_fuzz.hpp"

OCCULTA_JSON_FUZZ_TARGET("fuzz.track.json", occulta::fit::read_track)
