// fits_util.hpp (io-private) -- small helpers shared by the FITS reader and writers: cfitsio status
// text, RAII handles for fitsfile and wcsprm arrays, header-card helpers.
#pragma once

#include <fitsio.h>
#include <wcslib/wcs.h>
#include <wcslib/wcshdr.h>

#include <string>
#include <vector>

namespace zeeline::io_detail {

/// "cfitsio status N: <text>; <error stack>" (and clears the stack).
std::string CfitsioMessage(int status);

/// Closes the file on destruction (errors ignored).
struct FitsCloser {
  fitsfile* f = nullptr;
  FitsCloser() = default;
  explicit FitsCloser(fitsfile* file) : f(file) {}
  FitsCloser(const FitsCloser&) = delete;
  FitsCloser& operator=(const FitsCloser&) = delete;
  ~FitsCloser() { Close(); }
  void Close() {
    if (f) {
      int status = 0;
      fits_close_file(f, &status);
      f = nullptr;
    }
  }
  fitsfile* release() {
    fitsfile* r = f;
    f = nullptr;
    return r;
  }
};

/// wcsprm array from wcspih, freed on destruction.
struct WcsArray {
  int nwcs = 0;
  wcsprm* wcs = nullptr;
  WcsArray() = default;
  WcsArray(const WcsArray&) = delete;
  WcsArray& operator=(const WcsArray&) = delete;
  ~WcsArray() {
    if (wcs) wcsvfree(&nwcs, &wcs);
  }
};

/// A single wcsprm freed with wcsfree on destruction (flag = -1 before first use).
struct WcsHolder {
  wcsprm w{};
  WcsHolder() { w.flag = -1; }
  WcsHolder(const WcsHolder&) = delete;
  WcsHolder& operator=(const WcsHolder&) = delete;
  ~WcsHolder() { wcsfree(&w); }
};

/// wcslib error text of a wcsprm (wcserr_enable must be on), or the status number.
std::string WcsMessage(const wcsprm& wcs, int status);

/// Turns on wcslib error messages once (process-wide).
void EnableWcsErrors();

/// Splits a block of 80-character cards into trimmed-right records; skips blank cards.
std::vector<std::string> SplitCards(const std::string& header);

/// 80-char keyword name of a card (trimmed).
std::string CardKeyword(const std::string& card);

/// Replaces characters outside printable ASCII (32..126) with '?': FITS headers are ASCII only.
std::string AsciiOnly(const std::string& s);

/// Trimmed copy.
std::string Trim(const std::string& s);

/// %.10g
std::string Num(double v);

/// The cards of `header` that wcspih may safely read: commentary cards (COMMENT, HISTORY, blank keyword),
/// CONTINUE cards and keywords with axis numbers above 99 dropped, every other card checked against the FITS
/// Standard 4.0 (sect. 4.1.2.1, 4.2.1): ASCII text 0x20..0x7E, a string value closed by a quote, no keyword
/// repeated with another value, WCSAXES <= 99. wcslib 7.12's header parser overruns a buffer on an unterminated
/// string value, and a stray NAXIS = 6302 or CTYPE9999 makes it allocate and loop over n^2 matrix elements
/// (both found by tests/fuzz/fuzz_fits_header), so such headers are refused or trimmed here. Returns false with
/// `error` naming the card number, its keyword and the problem.
bool WcsSafeCards(const std::string& header, std::string& cards, std::string& error);

/// Parses a header block (cards) with wcspih and returns the primary (alternate ' ') WCS into `out`
/// (via wcssub copy). Returns false when the header has no WCS keywords. Throws nothing; `error`
/// receives a message on failure (returns false with non-empty error).
bool ParseHeaderWcs(const std::string& header, int nkeys, WcsHolder& out, std::string& error);

/// Header cards (80-character records, concatenated, COMMENT cards dropped) of a wcsprm via wcshdo.
/// Returns false with `error` set on failure.
bool WcsToCards(wcsprm& wcs, std::string& cards, std::string& error);

}  // namespace zeeline::io_detail
