#include "io/fits_util.hpp"

#include <wcslib/wcserr.h>
#include <wcslib/wcsutil.h>

#include <algorithm>
#include <cctype>
#include <cstdio>
#include <cstdlib>
#include <map>
#include <mutex>

namespace zeeline::io_detail {

std::string CfitsioMessage(int status) {
  char text[FLEN_STATUS] = {0};
  fits_get_errstatus(status, text);
  std::string out = "cfitsio status " + std::to_string(status) + ": " + text;
  char msg[FLEN_ERRMSG] = {0};
  int n = 0;
  while (fits_read_errmsg(msg)) {
    // The first few stack entries are the informative ones; drop the rest.
    if (n < 3 && msg[0] != '\0') out += std::string("; ") + Trim(msg);
    ++n;
  }
  return out;
}

std::string WcsMessage(const wcsprm& wcs, int status) {
  if (wcs.err && wcs.err->msg && wcs.err->msg[0] != '\0') return std::string("wcslib: ") + wcs.err->msg;
  return "wcslib status " + std::to_string(status);
}

void EnableWcsErrors() {
  static std::once_flag once;
  std::call_once(once, [] { wcserr_enable(1); });
}

std::vector<std::string> SplitCards(const std::string& header) {
  std::vector<std::string> cards;
  for (std::size_t i = 0; i < header.size(); i += 80) {
    std::string card = header.substr(i, 80);
    const std::string t = Trim(card);
    if (t.empty()) continue;
    cards.push_back(card.substr(0, card.find_last_not_of(' ') + 1));
  }
  return cards;
}

std::string CardKeyword(const std::string& card) { return Trim(card.substr(0, 8)); }

std::string AsciiOnly(const std::string& s) {
  std::string out = s;
  for (char& c : out) {
    const unsigned char u = static_cast<unsigned char>(c);
    if (u < 32 || u > 126) c = '?';
  }
  return out;
}

std::string Trim(const std::string& s) {
  const auto b = s.find_first_not_of(" \t\r\n");
  if (b == std::string::npos) return "";
  const auto e = s.find_last_not_of(" \t\r\n");
  return s.substr(b, e - b + 1);
}

std::string Num(double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.10g", v);
  return buf;
}

bool WcsSafeCards(const std::string& header, std::string& cards, std::string& error) {
  cards.clear();
  const std::size_t n = header.size() / 80;
  std::map<std::string, std::size_t> seen;  // keyword -> index of its first card
  for (std::size_t i = 0; i < n; ++i) {
    const std::string card = header.substr(i * 80, 80);
    const std::string key = card.substr(0, 8);
    if (key == "COMMENT " || key == "HISTORY " || key == "        " || key == "CONTINUE") continue;
    // wcspih sizes its arrays by the largest axis number in any WCS keyword (CTYPE9999 -> 9999^2 PC
    // elements): keywords with axis numbers above 99 are dropped (zeeline reads at most 4 axes).
    bool big_index = false;
    for (std::size_t c = 0, run = 0; c < 8; ++c) {
      run = std::isdigit(static_cast<unsigned char>(key[c])) ? run + 1 : 0;
      big_index = big_index || run >= 3;
    }
    if (big_index) continue;
    auto where = [&] {
      std::string k = Trim(key);
      for (char& c : k)
        if (static_cast<unsigned char>(c) < 0x20 || static_cast<unsigned char>(c) > 0x7e) c = '?';
      return "header card " + std::to_string(i + 1) + " (" + (k.empty() ? std::string("no keyword") : k) + ")";
    };
    for (std::size_t c = 0; c < 80; ++c) {
      const auto b = static_cast<unsigned char>(card[c]);
      if (b < 0x20 || b > 0x7e) {
        char hex[8];
        std::snprintf(hex, sizeof hex, "0x%02x", b);
        error = where() + ": byte " + hex + " at column " + std::to_string(c + 1) +
                " is not printable ASCII (FITS header text is 0x20-0x7E)";
        return false;
      }
    }
    if (card.compare(8, 2, "= ") == 0) {
      const std::size_t q = card.find_first_not_of(' ', 10);
      if (q != std::string::npos && card[q] == '\'') {
        bool closed = false;
        for (std::size_t j = q + 1; j < 80; ++j) {
          if (card[j] != '\'') continue;
          if (j + 1 < 80 && card[j + 1] == '\'') {  // '' is a quote inside the string
            ++j;
            continue;
          }
          closed = true;
          break;
        }
        if (!closed) {
          error = where() + ": string value without a closing quote";
          return false;
        }
      }
    }
    // A keyword may appear once (FITS Standard 4.0 sect. 4.1.2.1): a second NAXIS or WCSAXES would give
    // wcslib another axis count than cfitsio. An identical repeat is dropped; a different one is an error.
    const auto [first, inserted] = seen.emplace(key, i);
    if (!inserted) {
      if (header.compare(first->second * 80, 80, card) == 0) continue;
      error = where() + ": keyword repeated with another value (first at card " + std::to_string(first->second + 1) + ")";
      return false;
    }
    if (key.compare(0, 7, "WCSAXES") == 0 && card.compare(8, 2, "= ") == 0 &&
        std::strtol(card.c_str() + 10, nullptr, 10) > 99) {
      error = where() + ": more than 99 WCS axes";
      return false;
    }
    cards += card;
  }
  return true;
}

bool ParseHeaderWcs(const std::string& header, int nkeys, WcsHolder& out, std::string& error) {
  EnableWcsErrors();
  WcsArray arr;
  int nreject = 0;
  std::string copy;  // wcspih takes char*
  if (!WcsSafeCards(header.substr(0, std::min<std::size_t>(header.size(), 80u * static_cast<std::size_t>(std::max(nkeys, 0)))),
                    copy, error))
    return false;
  const int st = wcspih(copy.data(), static_cast<int>(copy.size() / 80), WCSHDR_all, 0, &nreject, &arr.nwcs, &arr.wcs);
  if (st != 0) {
    error = "wcslib could not parse the header (wcspih status " + std::to_string(st) + ")";
    return false;
  }
  if (arr.nwcs == 0) return false;
  int alts[27];
  wcsidx(arr.nwcs, &arr.wcs, alts);
  const int index = alts[0] >= 0 ? alts[0] : 0;  // primary description (alternate ' ')
  int nsub = 0;                                   // 0 = copy all axes
  const int st2 = wcssub(1, &arr.wcs[index], &nsub, nullptr, &out.w);
  if (st2 != 0) {
    error = WcsMessage(arr.wcs[index], st2);
    return false;
  }
  return true;
}

namespace {
// Tidies one card written by wcshdo: drops MJDREF/MJDREFI/MJDREFF = 0 (the FITS time default that
// wcslib writes even when the input had no time reference; FITS WCS Paper VII, Rots et al. 2015, sect.
// 4.1.2.1, from memory) and separates the CTYPE comment that wcslib runs together ("Coordinate type
// codegnomonic projection"). Returns an empty string for a card to drop.
std::string TidyWcsCard(const std::string& card) {
  const std::string key = CardKeyword(card);
  if (key == "MJDREF" || key == "MJDREFI" || key == "MJDREFF") {
    const std::size_t eq = card.find('=');
    const std::size_t slash = card.find('/', eq == std::string::npos ? 0 : eq);
    if (eq != std::string::npos) {
      const std::string value = Trim(card.substr(eq + 1, slash == std::string::npos ? std::string::npos : slash - eq - 1));
      char* end = nullptr;
      const double v = std::strtod(value.c_str(), &end);
      if (end != value.c_str() && *end == '\0' && v == 0.0) return "";
    }
    return card;
  }
  if (key.rfind("CTYPE", 0) == 0) {
    static const std::string kCode = "Coordinate type code";
    const std::size_t q = card.find('\'', 10);
    const std::size_t q2 = q == std::string::npos ? q : card.find('\'', q + 1);
    const std::size_t slash = q2 == std::string::npos ? q2 : card.find('/', q2 + 1);
    if (slash == std::string::npos) return card;
    const std::size_t c = card.find(kCode, slash);
    if (c == std::string::npos) return card;
    const std::string rest = Trim(card.substr(c + kCode.size()));
    std::string out = card.substr(0, c) + kCode + (rest.empty() ? "" : ", " + rest);
    if (out.size() > 80) out.resize(80);
    return out;
  }
  return card;
}
}  // namespace

bool WcsToCards(wcsprm& wcs, std::string& cards, std::string& error) {
  EnableWcsErrors();
  char* out = nullptr;
  int nrec = 0;
  const int hs = wcshdo(WCSHDO_safe | WCSHDO_P17, &wcs, &nrec, &out);
  if (hs != 0) {
    error = WcsMessage(wcs, hs);
    return false;
  }
  cards.clear();
  for (const auto& card : SplitCards(std::string(out, static_cast<std::size_t>(nrec) * 80))) {
    const std::string key = CardKeyword(card);
    if (key == "COMMENT" || key.empty()) continue;
    std::string padded = TidyWcsCard(card);
    if (padded.empty()) continue;
    padded.resize(80, ' ');
    cards += padded;
  }
  wcsdealloc(out);
  return true;
}

}  // namespace zeeline::io_detail
