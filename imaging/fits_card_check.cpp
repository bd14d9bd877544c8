// imaging/fits_card_check.cpp — the values of the cards cfitsio converts, checked before
// it sees them (why: fits_card_check.hpp).
#include "imaging/fits_card_check.hpp"

#include <algorithm>
#include <array>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdlib>

#include "imaging/input_error.hpp"

namespace occulta::imaging::fits_detail {

namespace {

enum class Type { Other, Integer, Number, IntegerOrText, Text };

bool numbered(std::string_view key, std::string_view stem) {
  return key.size() > stem.size() && key.size() <= 8 && key.starts_with(stem) &&
         std::all_of(key.begin() + static_cast<std::ptrdiff_t>(stem.size()), key.end(),
                     [](char c) { return c >= '0' && c <= '9'; });
}

// The keywords cfitsio 4.2 reads as numbers when it opens an HDU, reads its pixels or
// reconstructs a tile-compressed image's header (FITS Standard 4.0 §4.4.1–4.4.2, §7.2–7.3;
// tiled convention, Pence et al. 2009 §4), and their types there.
Type type_of(std::string_view key, bool ascii_table) {
  static constexpr std::array<std::string_view, 19> integers = {
      "BITPIX",  "NAXIS",   "PCOUNT",  "GCOUNT", "TFIELDS",  "THEAP", "BLANK",
      "EXTVER",  "EXTLEVEL", "ZBITPIX", "ZNAXIS", "ZPCOUNT", "ZGCOUNT", "ZBLANK",
      "ZDITHER0", "ZTHEAP",  "ZEXTVER", "ZEXTLEVEL", "ZBLOCKED"};
  if (std::find(integers.begin(), integers.end(), key) != integers.end()) return Type::Integer;
  for (std::string_view stem : {"NAXIS", "ZNAXIS", "ZTILE", "TBCOL"})
    if (numbered(key, stem)) return Type::Integer;
  // §7.2.2: an ASCII table's TNULLn is a string; §7.3.2: a binary table's an integer.
  if (numbered(key, "TNULL")) return ascii_table ? Type::IntegerOrText : Type::Integer;
  for (std::string_view name : {"BSCALE", "BZERO", "ZSCALE", "ZZERO"})
    if (key == name) return Type::Number;
  for (std::string_view stem : {"TSCAL", "TZERO", "ZVAL"})
    if (numbered(key, stem)) return Type::Number;
  // A table's column names, formats, units and display formats are quoted texts (§7.3.2).
  // cfitsio copies TTYPEn into its 70-byte column name (fitsio.h's tcolumn) when it opens
  // the table; unquoted, a value runs to 70 characters and its terminating zero lands past
  // the field (fits_fuzz: a buffer overflow in ffgtbp, once with "=" in column 9 and once,
  // `TTYPE1   =C'…`, in column 10).
  for (std::string_view stem : {"TTYPE", "TFORM", "TUNIT", "TDISP"})
    if (numbered(key, stem)) return Type::Text;
  return Type::Other;
}

// §4.2.1: a string in single quotes, a quote inside written twice, closed within the card.
bool is_quoted(std::string_view value) {
  if (!value.starts_with('\'')) return false;
  for (std::size_t at = 1; at < value.size(); ++at) {
    if (value[at] != '\'') continue;
    if (at + 1 < value.size() && value[at + 1] == '\'') {
      ++at;
      continue;
    }
    return true;
  }
  return false;
}

// §4.2.3: an optional sign and digits.
bool is_integer(std::string_view value) {
  const bool negative = !value.empty() && value.front() == '-';
  if (!value.empty() && (value.front() == '+' || negative)) value.remove_prefix(1);
  if (value.empty() || value.front() < '0' || value.front() > '9') return false;
  // Read with its sign so that −2⁶³ is in range and +2⁶³ is not.
  long long number = 0;
  const std::string text = (negative ? "-" : "") + std::string(value);
  const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), number);
  return error == std::errc() && end == text.data() + text.size();
}

// §4.2.4: a sign, digits with an optional decimal point, an optional exponent E or D
// (cfitsio also takes e and d); finite in a double, as cfitsio's strtod-based ffc2dd needs.
bool is_number(std::string_view value) {
  std::size_t at = 0;
  auto digits = [&] {
    const std::size_t start = at;
    while (at < value.size() && value[at] >= '0' && value[at] <= '9') ++at;
    return at - start;
  };
  if (at < value.size() && (value[at] == '+' || value[at] == '-')) ++at;
  std::size_t mantissa = digits();
  if (at < value.size() && value[at] == '.') {
    ++at;
    mantissa += digits();
  }
  if (mantissa == 0) return false;
  if (at < value.size() && (value[at] == 'E' || value[at] == 'D' || value[at] == 'e' || value[at] == 'd')) {
    ++at;
    if (at < value.size() && (value[at] == '+' || value[at] == '-')) ++at;
    if (digits() == 0) return false;
  }
  if (at != value.size()) return false;
  std::string text(value);
  std::replace(text.begin(), text.end(), 'D', 'E');
  std::replace(text.begin(), text.end(), 'd', 'e');
  errno = 0;
  const double number = std::strtod(text.c_str(), nullptr);
  return errno != ERANGE && std::isfinite(number);
}

std::string shown(std::string_view value) {
  std::string text(value.substr(0, 40));
  for (char& c : text)
    if (c < ' ' || c > '~') c = '?';  // readable text in the sentence
  return value.size() > 40 ? text + "…" : text;
}

}  // namespace

void check_card_values(std::string_view cards, bool ascii_table, const std::string& hdu, const std::string& source) {
  for (std::size_t at = 0; at + 80 <= cards.size(); at += 80) {
    const std::string_view card = cards.substr(at, 80);
    if (card.starts_with("END     ")) return;
    // A keyword name holds no space (FITS Standard 4.0 §4.1.2.1), whatever the keyword.
    // cfitsio takes a name field with a space inside it as the keyword before the space:
    // "ZTILE2 S…" as ZTILE2 without a value, and 4.2 divided by a tile size of 0
    // (fits_fuzz: SIGFPE in imcomp_get_compressed_image_par); "ZNAME2 $= 'BYTEPIX'" as
    // ZNAME2, so that it read ZVAL2 as the Rice BYTEPIX, an integer, which the checks
    // here did not know it would (fits_disk_fuzz: a 56-digit ZVAL2 overflowed ffc2j's
    // message buffer).
    const std::string_view field = card.substr(0, 8);
    if (const std::size_t first = field.find_first_not_of(' '); first != std::string_view::npos) {
      // The name as cfitsio reads it runs to the first space or "="; an "=" early is the
      // value indicator's fault, below.
      const std::size_t gap = field.find_first_of(" =", first);
      const std::size_t next = gap == std::string_view::npos || field[gap] == '='
                                   ? std::string_view::npos
                                   : field.find_first_not_of(' ', gap);
      if (next != std::string_view::npos && field[next] != '=')
        throw InputError(source, hdu + "the keyword name \"" + shown(field) + "\" holds a space after " +
                                     shown(field.substr(first, gap - first)) + " (FITS Standard 4.0 §4.1.2.1)");
    }
    std::string_view key = card.substr(0, 8);
    while (!key.empty() && key.back() == ' ') key.remove_suffix(1);
    if (card[8] != '=') {
      // cfitsio 4.2 also reads a value whose "=" stands elsewhere: the name runs to the
      // first space or "=", and an "=" after it (past spaces) starts the value
      // (fits_fuzz: "BLANK  =" with "=" in column 8 gave BLANK a 60-byte value, and
      // ffc2j overflowed its message buffer on it). A typed keyword written so is refused.
      const std::size_t name_end = std::min(card.find_first_of(" ="), card.size());
      const std::size_t equals = card.find_first_not_of(' ', name_end);
      if (name_end == 0) continue;
      const std::string_view name = card.substr(0, name_end);
      if (type_of(name, ascii_table) == Type::Other) continue;
      if (equals != std::string_view::npos && card[equals] == '=')
        throw InputError(source, hdu + std::string(name) + " has its value indicator \"=\" in column " +
                                     std::to_string(equals + 1) + ", not in column 9 (FITS Standard 4.0 §4.1.2.2)");
      // Without "=" in column 9 the card is commentary by the standard, but cfitsio still
      // finds it by name and reads the value after a later "=" on it: fits_disk_fuzz's
      // "ZVAL1 <spaces> CRVAL2 = 0.0" gave a Rice BLOCKSIZE of 0, and 4.2 divided by it on
      // entering the HDU (SIGFPE in imcomp_calc_max_elem). With no "=" at all it reports
      // the value undefined. A keyword cfitsio reads as a value needs its indicator.
      throw InputError(source, hdu + std::string(name) + " has no value indicator \"= \" in columns 9–10, and " +
                                   "cfitsio would read it as a value (FITS Standard 4.0 §4.1.2.2)");
    }
    const Type type = type_of(key, ascii_table);
    if (type == Type::Other) continue;
    const std::string name(key);
    if (type == Type::Text) {  // "= ", then past spaces a quoted text
      const std::size_t start = card.find_first_not_of(' ', 10);
      if (card[9] == ' ' && start != std::string_view::npos && is_quoted(card.substr(start))) continue;
      throw InputError(source, hdu + name + " is not a quoted text value (FITS Standard 4.0 §7.3.2)");
    }
    if (card[9] != ' ')
      throw InputError(source, hdu + name + " has \"=\" without the space after it that makes a value indicator "
                                   "(FITS Standard 4.0 §4.1.2.2)");
    std::string_view value = card.substr(10);
    while (!value.empty() && value.front() == ' ') value.remove_prefix(1);
    if (type == Type::IntegerOrText && value.starts_with('\'')) continue;  // a string: cfitsio copies it
    value = value.substr(0, value.find('/'));
    while (!value.empty() && value.back() == ' ') value.remove_suffix(1);
    if (value.empty())
      throw InputError(source, hdu + name + " has no value, and it must be a number (FITS Standard 4.0 §4.2)");
    if (type == Type::Number ? !is_number(value) : !is_integer(value))
      throw InputError(source, hdu + name + " is \"" + shown(value) + "\", not " +
                                   (type == Type::Number ? "a number" : "an integer") +
                                   " within 64 bits (FITS Standard 4.0 " +
                                   (type == Type::Number ? "§4.2.4" : "§4.2.3") + ")");
  }
}

}  // namespace occulta::imaging::fits_detail
