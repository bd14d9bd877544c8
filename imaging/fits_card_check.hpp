// imaging/fits_card_check.hpp — private to imaging/fits*.cpp: the values of the header
// cards that cfitsio converts itself, checked in the raw bytes before it sees them.
//
// Why: cfitsio 4.2 writes its conversion error messages into fixed 81-byte buffers. When
// an integer card such as BLANK, ZBITPIX or ZBLANK holds a value it cannot convert, ffc2j
// appends 30 characters of that value to a 52-character message (the message texts are
// in libcfitsio.so), overflowing the buffer: `*** buffer overflow detected ***` in a
// FORTIFY build, a stack overwrite in others (../shared/repro/fits-*-long-value*.fits).
// Its table parser formats a bad TNULLn or TSCALn value into a buffer of the same size.
// A card that cfitsio converts is therefore refused here unless its value is written as
// the FITS Standard says (§4.2.3 integers, §4.2.4 reals, §4.2.1 strings), in range.
#pragma once

#include <string>
#include <string_view>

namespace occulta::imaging::fits_detail {

// `cards`: one header's 80-byte records in file order, up to (not necessarily including)
// END. `hdu`: the opening of our sentences, e.g. "the header of HDU 2 is malformed: ".
// `ascii_table`: XTENSION = 'TABLE' (whose TNULLn is a string, FITS Standard 4.0 §7.2.2).
// Throws InputError(source, …) on the first card whose value cfitsio could not convert.
void check_card_values(std::string_view cards, bool ascii_table, const std::string& hdu, const std::string& source);

}  // namespace occulta::imaging::fits_detail
