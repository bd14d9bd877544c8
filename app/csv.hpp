// app/csv.hpp — comma-separated text as RFC 4180 writes it: fields split by ',', a field
// that holds ',', '"', CR or LF is quoted with '"' and its quotes doubled; records end
// with LF (CRLF is read too). Read a record at a time, so a catalogue of any length
// streams through in constant memory.
#pragma once

#include <cstddef>
#include <istream>
#include <string>
#include <string_view>
#include <vector>

namespace occulta::app {

// Reads the next record into `fields`; false at the end of the input. `line` is the
// 1-based line the record starts on, counted from the start (updated across the call).
// Throws std::invalid_argument for a quote left open at the end of the input, or text
// after a closing quote — the caller names the file and line.
bool read_csv_record(std::istream& in, std::vector<std::string>& fields, std::size_t& line);

// A field as RFC 4180 writes it: quoted only when it must be.
std::string csv_quoted(std::string_view text);

}  // namespace occulta::app
