// imaging/fits_table.cpp — a binary table written a row at a time with cfitsio
// (contracts in fits_table.hpp).
#include "imaging/fits_table.hpp"

#include <cmath>
#include <cstdlib>
#include <limits>
#include <utility>

#include "imaging/fits_cfitsio.hpp"
#include "imaging/input_error.hpp"
#include "imaging/output_file.hpp"

namespace occulta::imaging {

std::string ascii_spelling(std::string_view utf8) {
  static const std::pair<std::string_view, std::string_view> spelled[] = {
      {"—", "--"}, {"–", "-"},  {"σ", "sigma"}, {"☉", "sun"},  {"°", " deg"}, {"±", "+/-"},  {"²", "2"},
      {"³", "3"},  {"×", "x"},  {"≤", "<="},    {"≥", ">="},   {"→", "->"},   {"≈", "~"},    {"α", "alpha"},
      {"δ", "delta"}, {"κ", "kappa"}, {"γ", "gamma"}, {"θ", "theta"}, {"φ", "phi"}, {"λ", "lambda"}, {"µ", "u"},
      {"…", "..."}, {"’", "'"}, {"“", "\""}, {"”", "\""}};
  std::string out;
  for (std::size_t i = 0; i < utf8.size();) {
    const unsigned char c = static_cast<unsigned char>(utf8[i]);
    if (c >= 0x20 && c <= 0x7e) {
      out += static_cast<char>(c);
      ++i;
      continue;
    }
    bool done = false;
    for (const auto& [symbol, spelling] : spelled)
      if (utf8.substr(i).starts_with(symbol)) {
        out += spelling;
        i += symbol.size();
        done = true;
        break;
      }
    if (done) continue;
    // One '?' for a whole UTF-8 sequence (a lead byte and its continuation bytes).
    out += '?';
    ++i;
    while (i < utf8.size() && (static_cast<unsigned char>(utf8[i]) & 0xC0) == 0x80) ++i;
  }
  return out;
}

struct FitsTableWriter::Impl {
  std::filesystem::path target, pending;
  std::vector<TableColumnSpec> columns;
  fitsfile* file = nullptr;
  long long rows = 0;
  bool committed = false;

  void check(int status, const std::string& what) const {
    if (status != 0)
      throw InputError(target.string(), "it cannot be written: " + what + " failed, " + fits_detail::describe_status(status));
  }
};

namespace {
constexpr long long kIntegerNull = std::numeric_limits<long long>::min();
}

FitsTableWriter::FitsTableWriter(const std::filesystem::path& target, const std::string& extname,
                                 const std::vector<TableColumnSpec>& columns)
    : impl_(std::make_unique<Impl>()) {
  Impl& t = *impl_;
  t.target = target;
  t.pending = pending_path(target);
  t.columns = columns;
  int status = 0;
  fits_create_diskfile(&t.file, t.pending.c_str(), &status);  // no extended file-name syntax
  t.check(status, "creating the file");
  fits_create_img(t.file, BYTE_IMG, 0, nullptr, &status);
  t.check(status, "the primary header");
  std::vector<std::string> names, forms, units;
  for (const TableColumnSpec& c : columns) {
    names.push_back(c.name);
    units.push_back(c.unit);
    forms.push_back(c.kind == TableColumnSpec::Kind::text ? std::to_string(std::max(c.width, 1)) + "A"
                    : c.kind == TableColumnSpec::Kind::real ? "D"
                                                            : "K");
  }
  std::vector<char*> ttype, tform, tunit;
  for (std::size_t i = 0; i < columns.size(); ++i) {
    ttype.push_back(names[i].data());
    tform.push_back(forms[i].data());
    tunit.push_back(units[i].data());
  }
  fits_create_tbl(t.file, BINARY_TBL, 0, static_cast<int>(columns.size()), ttype.data(), tform.data(), tunit.data(),
                  extname.c_str(), &status);
  t.check(status, "creating the table " + extname);
  for (std::size_t i = 0; i < columns.size(); ++i)
    if (columns[i].kind == TableColumnSpec::Kind::integer) {
      const std::string key = "TNULL" + std::to_string(i + 1);
      LONGLONG null = kIntegerNull;
      fits_write_key(t.file, TLONGLONG, key.c_str(), &null, "missing value", &status);
      fits_set_btblnull(t.file, static_cast<int>(i + 1), null, &status);
    }
  t.check(status, "the null values of the table's integer columns");
}

FitsTableWriter::~FitsTableWriter() {
  if (impl_->file) {
    int status = 0;
    fits_close_file(impl_->file, &status);
  }
  if (!impl_->committed) {
    std::error_code ignored;
    std::filesystem::remove(impl_->pending, ignored);
  }
}

void FitsTableWriter::add_row(const std::vector<std::string>& values) {
  Impl& t = *impl_;
  if (values.size() != t.columns.size())
    throw InputError(t.target.string(), "a row has " + std::to_string(values.size()) + " values for " +
                                            std::to_string(t.columns.size()) + " columns");
  const LONGLONG row = ++t.rows;
  int status = 0;
  for (std::size_t i = 0; i < values.size(); ++i) {
    const TableColumnSpec& c = t.columns[i];
    const int column = static_cast<int>(i) + 1;
    const std::string& v = values[i];
    const auto refuse = [&](const std::string& why) {
      throw InputError(t.target.string(), "row " + std::to_string(row) + " column " + c.name + ": " + why);
    };
    if (c.kind == TableColumnSpec::Kind::text) {
      if (v.size() > static_cast<std::size_t>(c.width)) refuse("the text is longer than the column's width");
      for (char ch : v)
        if (ch < 0x20 || ch > 0x7e) refuse("the text holds a character outside printable ASCII");
      std::string copy = v;
      char* text = copy.data();
      fits_write_col(t.file, TSTRING, column, row, 1, 1, &text, &status);
    } else if (c.kind == TableColumnSpec::Kind::real) {
      double x = std::numeric_limits<double>::quiet_NaN();
      if (!v.empty()) {
        char* end = nullptr;
        x = std::strtod(v.c_str(), &end);
        if (end != v.c_str() + v.size()) refuse("\"" + v + "\" is not a number");
      }
      fits_write_col(t.file, TDOUBLE, column, row, 1, 1, &x, &status);
    } else if (v.empty()) {
      fits_write_col_null(t.file, column, row, 1, 1, &status);
    } else {
      char* end = nullptr;
      LONGLONG n = std::strtoll(v.c_str(), &end, 10);
      if (end != v.c_str() + v.size() || n == kIntegerNull) refuse("\"" + v + "\" is not an integer");
      fits_write_col(t.file, TLONGLONG, column, row, 1, 1, &n, &status);
    }
    t.check(status, "writing row " + std::to_string(row));
  }
}

void FitsTableWriter::commit() {
  Impl& t = *impl_;
  int status = 0;
  fits_write_chksum(t.file, &status);
  t.check(status, "writing the checksums");
  fits_close_file(t.file, &status);
  t.file = nullptr;
  t.check(status, "closing the file");
  commit_pending(t.pending, t.target);
  t.committed = true;
}

}  // namespace occulta::imaging
