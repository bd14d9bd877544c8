// imaging/fits_header.cpp — header records: the Header accessors, and turning cfitsio's
// 80-character cards into typed HeaderCard records (FITS Standard 4.0 §4.1–4.2).
#include <algorithm>
#include <array>
#include <cctype>
#include <charconv>
#include <cstdlib>
#include <cstring>

#include "imaging/fits_cfitsio.hpp"

namespace occulta::imaging {

const HeaderCard* Header::find(std::string_view key) const {
  for (const HeaderCard& card : cards)
    if (card.key == key) return &card;
  return nullptr;
}

std::optional<double> Header::number(std::string_view key) const {
  const HeaderCard* card = find(key);
  if (!card || (card->kind != HeaderCard::Kind::Integer && card->kind != HeaderCard::Kind::Real))
    return std::nullopt;
  return card->real;
}

std::optional<std::string> Header::text(std::string_view key) const {
  const HeaderCard* card = find(key);
  if (!card || card->kind != HeaderCard::Kind::Text) return std::nullopt;
  return card->text;
}

namespace {

HeaderCard& slot(Header& header, std::string_view key) {
  for (HeaderCard& card : header.cards)
    if (card.key == key) {
      card = HeaderCard{};
      card.key = std::string(key);
      return card;
    }
  HeaderCard& card = header.cards.emplace_back();
  card.key = std::string(key);
  return card;
}

}  // namespace

void Header::set_real(std::string_view key, double value, std::string_view comment) {
  HeaderCard& card = slot(*this, key);
  card.kind = HeaderCard::Kind::Real;
  card.real = value;
  card.comment = std::string(comment);
}

void Header::set_integer(std::string_view key, long long value, std::string_view comment) {
  HeaderCard& card = slot(*this, key);
  card.kind = HeaderCard::Kind::Integer;
  card.integer = value;
  card.real = static_cast<double>(value);
  card.comment = std::string(comment);
}

void Header::set_text(std::string_view key, std::string_view value, std::string_view comment) {
  HeaderCard& card = slot(*this, key);
  card.kind = HeaderCard::Kind::Text;
  card.text = std::string(value);
  card.comment = std::string(comment);
}

void Header::set_logical(std::string_view key, bool value, std::string_view comment) {
  HeaderCard& card = slot(*this, key);
  card.kind = HeaderCard::Kind::Logical;
  card.integer = value ? 1 : 0;
  card.real = card.integer;
  card.comment = std::string(comment);
}

void Header::add_commentary(std::string_view key, std::string_view text) {
  HeaderCard& card = cards.emplace_back();
  card.key = std::string(key);
  card.kind = HeaderCard::Kind::Commentary;
  card.text = std::string(text);
}

namespace fits_detail {

namespace {

std::string trim_right(std::string_view text) {
  while (!text.empty() && text.back() == ' ') text.remove_suffix(1);
  return std::string(text);
}

std::string trim(std::string_view text) {
  while (!text.empty() && text.front() == ' ') text.remove_prefix(1);
  return trim_right(text);
}

// A quoted string value (FITS Standard 4.0 §4.2.1.1): outer quotes removed, '' → ',
// trailing spaces dropped (they are not significant), leading spaces kept.
std::string unquote(std::string_view value) {
  while (!value.empty() && value.front() == ' ') value.remove_prefix(1);
  if (value.empty() || value.front() != '\'') return trim(value);
  std::string text;
  for (std::size_t i = 1; i < value.size(); ++i) {
    if (value[i] == '\'') {
      if (i + 1 < value.size() && value[i + 1] == '\'') {
        text += '\'';
        ++i;
        continue;
      }
      break;
    }
    text += value[i];
  }
  return trim_right(text);
}

bool is_commentary_key(std::string_view key) {
  return key.empty() || key == "COMMENT" || key == "HISTORY" || key == "CONTINUE";
}

}  // namespace

bool is_structural(std::string_view key) {
  static constexpr std::array<std::string_view, 17> exact = {
      "SIMPLE", "BITPIX", "NAXIS",  "EXTEND",   "XTENSION", "PCOUNT", "GCOUNT",
      "END",    "BSCALE", "BZERO",  "BLANK",    "CHECKSUM", "DATASUM", "INHERIT",
      "EXTNAME", "EXTVER", "EXTLEVEL"};
  if (std::find(exact.begin(), exact.end(), key) != exact.end()) return true;
  // NAXISn (§4.4.1.1); binary-table column keywords (§7.3.1) that a compressed image's
  // table carries; the tiled-image convention's Z* keywords (Pence et al. 2009 §4).
  auto numbered = [&](std::string_view stem) {
    if (key.size() <= stem.size() || key.substr(0, stem.size()) != stem) return false;
    return std::all_of(key.begin() + static_cast<long>(stem.size()), key.end(),
                       [](char c) { return std::isdigit(static_cast<unsigned char>(c)) != 0; });
  };
  for (std::string_view stem : {"NAXIS", "TTYPE", "TFORM", "TUNIT", "TSCAL", "TZERO", "TNULL",
                                "TDIM", "TDISP", "THEAP"})
    if (numbered(stem) || key == stem) return true;
  static constexpr std::array<std::string_view, 16> tiled = {
      "ZIMAGE", "ZBITPIX", "ZNAXIS",  "ZCMPTYPE", "ZQUANTIZ", "ZDITHER0", "ZSIMPLE", "ZEXTEND",
      "ZBLOCKED", "ZTENSION", "ZPCOUNT", "ZGCOUNT", "ZHECKSUM", "ZDATASUM", "ZBLANK", "ZTHEAP"};
  if (std::find(tiled.begin(), tiled.end(), key) != tiled.end()) return true;
  for (std::string_view stem : {"ZNAXIS", "ZTILE", "ZNAME", "ZVAL"})
    if (numbered(stem)) return true;
  return false;
}

HeaderCard parse_card(std::string_view raw) {
  // cfitsio's parsers take writable, NUL-terminated 80-character cards.
  std::array<char, FLEN_CARD> card{};
  const std::size_t length = std::min<std::size_t>(raw.size(), 80);
  std::memcpy(card.data(), raw.data(), length);

  HeaderCard result;
  std::array<char, FLEN_KEYWORD> name{};
  int name_length = 0, status = 0;
  fits_get_keyname(card.data(), name.data(), &name_length, &status);
  result.key = status == 0 ? std::string(name.data()) : trim_right(raw.substr(0, std::min<std::size_t>(8, raw.size())));
  status = 0;

  // Commentary: COMMENT, HISTORY, blank keyword, or no value indicator "= " in
  // columns 9–10 (§4.1.2.2, §4.4.2.4); the text is columns 9–80.
  const bool has_value_indicator = (length >= 10 && card[8] == '=' && card[9] == ' ') ||
                                   result.key.size() > 8;  // HIERARCH: '=' placed freely
  if (is_commentary_key(result.key) || !has_value_indicator) {
    result.kind = HeaderCard::Kind::Commentary;
    result.text = length > 8 ? trim_right(raw.substr(8, length - 8)) : std::string();
    return result;
  }

  std::array<char, FLEN_VALUE> value{};
  std::array<char, FLEN_COMMENT> comment{};
  fits_parse_value(card.data(), value.data(), comment.data(), &status);
  if (status != 0) {  // e.g. a string without its closing quote: keep the card, untyped
    result.kind = HeaderCard::Kind::Undefined;
    result.text = trim(raw.substr(10, length > 10 ? length - 10 : 0));
    fits_clear_errmsg();
    return result;
  }
  result.comment = trim(comment.data());
  const std::string value_text = trim(value.data());
  if (value_text.empty()) return result;  // undefined value (§4.1.2.3): Kind::Undefined

  char type = 0;
  fits_get_keytype(value.data(), &type, &status);
  if (status != 0) {
    fits_clear_errmsg();
    result.kind = HeaderCard::Kind::Undefined;
    result.text = value_text;
    return result;
  }
  switch (type) {
    case 'C':
      result.kind = HeaderCard::Kind::Text;
      result.text = unquote(value_text);
      break;
    case 'L':
      result.kind = HeaderCard::Kind::Logical;
      result.integer = value_text == "T" ? 1 : 0;
      result.real = static_cast<double>(result.integer);
      break;
    case 'I': {
      long long integer = 0;
      const char* begin = value_text.c_str() + (value_text.front() == '+' ? 1 : 0);
      const char* end = value_text.c_str() + value_text.size();
      const auto [ptr, error] = std::from_chars(begin, end, integer);
      if (error == std::errc() && ptr == end) {
        result.kind = HeaderCard::Kind::Integer;
        result.integer = integer;
        result.real = static_cast<double>(integer);
      } else {  // more digits than 64 bits hold: still a number
        result.kind = HeaderCard::Kind::Real;
        result.real = std::strtod(value_text.c_str(), nullptr);
      }
      break;
    }
    case 'F': {
      // §4.2.4: the exponent may be written with D as well as E.
      std::string number = value_text;
      std::replace(number.begin(), number.end(), 'D', 'E');
      std::replace(number.begin(), number.end(), 'd', 'e');
      result.kind = HeaderCard::Kind::Real;
      result.real = std::strtod(number.c_str(), nullptr);
      break;
    }
    default:  // complex values (§4.2.5) are kept as their text
      result.kind = HeaderCard::Kind::Text;
      result.text = value_text;
      break;
  }
  return result;
}

// A compressed image's header as the image it holds: what fits_convert_hdr2str gives —
// cfitsio writes the image's header into a scratch file in memory
// (fits_img_decompress_header) and reads it back as text — minus one cost: closing that
// scratch file would give its empty image its full data unit, zero-filled (2 MB for a
// 1024² int16 frame, on every read). The text is taken first; then the scratch image is
// made to claim no axes (NAXIS = 0), so that closing it writes no data.
int compressed_header_text(fitsfile* file, char** text, int* count) {
  int status = 0;
  fitsfile* scratch = nullptr;
  fits_create_file(&scratch, "mem://", &status);
  if (status != 0) {
    int close_status = 0;
    if (scratch) fits_close_file(scratch, &close_status);
    return status;
  }
  fits_img_decompress_header(file, scratch, &status);
  if (status == 0) fits_hdr2str(scratch, 0, nullptr, 0, text, count, &status);
  int close_status = 0;
  fits_modify_key_lng(scratch, "NAXIS", 0, "&", &close_status);
  close_status = 0;
  fits_close_file(scratch, &close_status);
  if (status == 0 && close_status != 0) status = close_status;
  return status;
}

int read_header_cards(fitsfile* file, bool compressed, Header& header) {
  int status = 0, count = 0;
  char* text = nullptr;
  if (compressed) status = compressed_header_text(file, &text, &count);
  else fits_hdr2str(file, 0, nullptr, 0, &text, &count, &status);
  if (status != 0) {
    // cfitsio routines do nothing when given a failed status, so freeing takes a fresh
    // one (fits_fuzz: the text of a header cfitsio failed on leaked).
    int free_status = 0;
    if (text) fits_free_memory(text, &free_status);
    return status;
  }
  const std::string_view all(text, std::strlen(text));
  for (std::size_t at = 0; at + 80 <= all.size(); at += 80) {
    HeaderCard card = parse_card(all.substr(at, 80));
    if (card.key == "END") break;
    // Long strings (§4.2.1.2): a Text value ending in '&' continues in CONTINUE cards.
    if (card.key == "CONTINUE" && !header.cards.empty()) {
      HeaderCard& previous = header.cards.back();
      if (previous.kind == HeaderCard::Kind::Text && !previous.text.empty() && previous.text.back() == '&') {
        // The continuation's columns 11–80 read like a value field; its comment, if
        // any, is the comment of the whole value.
        const std::string value_field = card.text.size() > 2 ? card.text.substr(2) : std::string();
        const HeaderCard piece = parse_card("CONTVALU= " + value_field);
        if (piece.kind == HeaderCard::Kind::Text) {
          previous.text.pop_back();
          previous.text += piece.text;
          if (!piece.comment.empty()) previous.comment = piece.comment;
          continue;
        }
      }
    }
    header.cards.push_back(std::move(card));
  }
  int free_status = 0;
  fits_free_memory(text, &free_status);
  return 0;
}

}  // namespace fits_detail
}  // namespace occulta::imaging
