// app/csv.cpp — RFC 4180 records in and fields out (contracts in csv.hpp).
#include "app/csv.hpp"

#include <stdexcept>

namespace occulta::app {

bool read_csv_record(std::istream& in, std::vector<std::string>& fields, std::size_t& line) {
  fields.clear();
  int c = in.get();
  if (c == std::char_traits<char>::eof()) return false;
  ++line;  // the record's first line
  std::string field;
  bool quoted = false, after_quote = false;
  const std::size_t first_line = line;
  for (;; c = in.get()) {
    if (c == std::char_traits<char>::eof()) {
      if (quoted)
        throw std::invalid_argument("a quoted field opened on line " + std::to_string(first_line) +
                                    " is never closed");
      fields.push_back(std::move(field));
      return true;
    }
    const char ch = static_cast<char>(c);
    if (quoted) {
      if (ch == '"') {
        if (in.peek() == '"') {
          field += '"';
          in.get();
        } else {
          quoted = false;
          after_quote = true;
        }
      } else {
        if (ch == '\n') ++line;
        field += ch;
      }
      continue;
    }
    if (ch == ',') {
      fields.push_back(std::move(field));
      field.clear();
      after_quote = false;
    } else if (ch == '\n' || (ch == '\r' && in.peek() == '\n')) {
      if (ch == '\r') in.get();
      fields.push_back(std::move(field));
      return true;
    } else if (after_quote) {
      throw std::invalid_argument("line " + std::to_string(line) + " has text after a closing quote");
    } else if (ch == '"' && field.empty()) {
      quoted = true;
    } else {
      field += ch;
    }
  }
}

std::string csv_quoted(std::string_view text) {
  if (text.find_first_of(",\"\r\n") == std::string_view::npos) return std::string(text);
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + '"';
}

}  // namespace occulta::app
