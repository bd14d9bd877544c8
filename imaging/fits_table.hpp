// imaging/fits_table.hpp — a FITS binary table written a row at a time (FITS Standard 4.0
// §7.3), for tables too long to hold: a primary HDU with no data, then one BINTABLE
// extension. Columns are text (TFORM nA, n fixed when the table is opened), real
// (TFORM D, IEEE NaN where a value is missing, §7.3.3.1) or integer (TFORM K with
// TNULLn, §7.3.2); each has its TUNITn. Text in a table must be ASCII (§7.3.3.1), so the
// writer refuses other bytes; ascii_spelling() spells out the symbols occulta's
// sentences use. The file appears whole or not at all: written beside the target,
// with checksums (§4.4.2.7), then renamed by commit().
#pragma once

#include <filesystem>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

namespace occulta::imaging {

struct TableColumnSpec {
  enum class Kind { text, real, integer };
  std::string name;  // TTYPEn
  Kind kind = Kind::text;
  std::string unit;  // TUNITn, "" for none
  int width = 1;     // text only: bytes per value (≥ 1); longer values are refused
};

// Text as FITS tables hold it: printable ASCII. The symbols occulta's sentences use are
// spelled out (— → "--", σ → "sigma", ☉ → "sun", ° → " deg", ± → "+/-", ² → "2", …);
// any other character outside printable ASCII becomes '?'.
std::string ascii_spelling(std::string_view utf8);

class FitsTableWriter {  // owns the open cfitsio file and its temporary name
 public:
  // InputError(target, …) when the file cannot be made.
  FitsTableWriter(const std::filesystem::path& target, const std::string& extname,
                  const std::vector<TableColumnSpec>& columns);
  ~FitsTableWriter();  // an uncommitted table is removed
  FitsTableWriter(const FitsTableWriter&) = delete;
  FitsTableWriter& operator=(const FitsTableWriter&) = delete;

  // One row, a value per column as text: text columns as they are (ASCII, within the
  // width), real and integer columns as decimal numbers, "" for missing. InputError(target,
  // …) for a value that does not fit its column.
  void add_row(const std::vector<std::string>& values);
  // Checksums, close, fsync, rename over the target.
  void commit();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace occulta::imaging
