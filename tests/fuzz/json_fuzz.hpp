// tests/fuzz/json_fuzz.hpp — what the readers of occulta's own JSON files share as fuzz
// targets: any bytes as the file; the reader must return or throw InputError — never
// crash, hang, or throw anything else (nlohmann's exceptions included).
#pragma once

#include "imaging/input_error.hpp"
#include "tests/fuzz/fuzz_file.hpp"

#define OCCULTA_JSON_FUZZ_TARGET(file_name, read)                                        \
  extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {     \
    const std::filesystem::path path = occulta::fuzz::fuzz_file(data, size, file_name);   \
    try {                                                                                 \
      read(path);                                                                         \
    } catch (const occulta::imaging::InputError&) {                                       \
    }                                                                                     \
    return 0;                                                                             \
  }
