// tests/fuzz/scenario_fuzz.cpp — libFuzzer target: fit/scenario.cpp read_scenario on any bytes.
#include "fit/scenario.hpp"
#include "tests/fuzz/json_fuzz.hpp"

OCCULTA_JSON_FUZZ_TARGET("fuzz.scenario.json", occulta::fit::read_scenario)
