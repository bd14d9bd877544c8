// tests/fuzz/catalogue_fuzz.cpp — libFuzzer target: app/catalogue's CatalogueReader on any
// bytes as the catalogue of a catalogue run, read to its last row. It must end in rows
// (each with or without its fault sentence) or an InputError for the whole file — never a
// crash, a hang, or another exception.
#include "app/batch_table.hpp"
#include "app/catalogue.hpp"
#include "imaging/input_error.hpp"
#include "tests/fuzz/fuzz_file.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  // The run's own reserved names, as `batch` passes them (app/batch.cpp).
  static const std::vector<std::string> reserved = occulta::app::result_column_names();
  const std::filesystem::path path = occulta::fuzz::fuzz_file(data, size, "fuzz.csv");
  try {
    occulta::app::CatalogueReader reader(path, reserved);
    // Every call consumes at least one record of a finite file, so this ends.
    while (reader.next()) {
    }
  } catch (const occulta::imaging::InputError&) {
  }
  return 0;
}
