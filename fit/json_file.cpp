#include "fit/json_file.hpp"

#include <fstream>

#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"

namespace occulta::fit {

nlohmann::json read_json_file(const std::filesystem::path& path) {
  std::ifstream in(path);
  if (!in) throw imaging::InputError(path.string(), "cannot be opened");
  try {
    return nlohmann::json::parse(in);
  } catch (const nlohmann::json::exception& e) {
    // parse_error, and out_of_range for a number beyond a double (e.g. 1e999; found by
    // result_fuzz, which then ended in std::terminate).
    throw imaging::InputError(path.string(), std::string("is not valid JSON (") + e.what() + ")");
  }
}

void write_json_file(const std::filesystem::path& path, const nlohmann::json& doc) {
  write_text_file(path, doc.dump(2) + "\n");
}

void write_text_file(const std::filesystem::path& path, const std::string& text) {
  imaging::write_file_atomically(path, text);  // temporary, fsync, rename
}

}  // namespace occulta::fit
