// utf8_bom.hpp (private) -- text files saved by spreadsheet programs often start with the UTF-8 encoding
// of U+FEFF, the byte-order mark EF BB BF (Unicode Standard, sect. 23.8; RFC 3629 sect. 6). It is not part
// of the first column's name, so the text readers (line lists, spectrum tables) skip it.
#pragma once

#include <string>

namespace zeeline {

/// `text` without a leading UTF-8 byte-order mark (unchanged when there is none).
inline std::string WithoutUtf8Bom(const std::string& text) {
  static const char kBom[] = "\xEF\xBB\xBF";
  return text.compare(0, 3, kBom) == 0 ? text.substr(3) : text;
}

}  // namespace zeeline
