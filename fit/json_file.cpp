#include "fit/json_file.hpp"

#include <algorithm>
#include <fstream>
#include <iterator>

#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"

namespace occulta::fit {

nlohmann::json read_json_file(const std::filesystem::path& path) {
  const std::string file = path.string();
  std::error_code error;
  const auto status = std::filesystem::status(path, error);
  if (!std::filesystem::exists(status)) throw imaging::InputError(file, "does not exist");
  if (std::filesystem::is_directory(status)) throw imaging::InputError(file, "is a folder, not a JSON file");
  // A FIFO, socket or device could block the reader for ever (a FIFO with no writer does).
  if (!std::filesystem::is_regular_file(status))
    throw imaging::InputError(file, "is not a regular file (a FIFO, socket or device), so it is not read");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw imaging::InputError(file, "cannot be opened for reading");
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  if (in.bad()) throw imaging::InputError(file, "could not be read");
  // The library's messages name its own internals; say where and what in our words.
  try {
    return nlohmann::json::parse(text);
  } catch (const nlohmann::json::parse_error& e) {
    const size_t at = std::min(e.byte > 0 ? e.byte - 1 : 0, text.size());
    size_t line = 1, column = 1;
    for (size_t i = 0; i < at; ++i) text[i] == '\n' ? (++line, column = 1) : ++column;
    if (text.find_first_not_of(" \t\r\n") == std::string::npos)
      throw imaging::InputError(file, "is not valid JSON: it is empty");
    throw imaging::InputError(file, "is not valid JSON: syntax error at line " + std::to_string(line) +
                                        ", column " + std::to_string(column));
  } catch (const nlohmann::json::exception&) {
    throw imaging::InputError(file, "holds a number too large for a double (such as 1e999)");
  }
}

std::string json_text(const nlohmann::json& doc, int indent) {
  return doc.dump(indent, ' ', false, nlohmann::json::error_handler_t::replace);
}

void write_json_file(const std::filesystem::path& path, const nlohmann::json& doc) {
  write_text_file(path, json_text(doc, 2) + "\n");
}

void write_text_file(const std::filesystem::path& path, const std::string& text) {
  imaging::write_file_atomically(path, text);  // temporary, fsync, rename
}

}  // namespace occulta::fit
