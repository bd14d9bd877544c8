// tests/fuzz/track_fuzz.cpp — libFuzzer target: app/track.cpp read_track on any bytes.
#include "app/track.hpp"
#include "tests/fuzz/json_fuzz.hpp"

OCCULTA_JSON_FUZZ_TARGET("fuzz.track.json", occulta::app::read_track)
