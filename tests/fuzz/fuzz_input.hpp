// fuzz_input.hpp -- shared by the fuzz targets: the input as text, split into fields by a separator byte.
// Each target's LLVMFuzzerTestOneInput parses what a user could type or write in a file and catches only the
// exception type its parser documents (core/errors.hpp); anything else -- another exception, a crash, a
// sanitizer report, a hang -- is a bug that libFuzzer reports.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

namespace zeeline::fuzz {

inline std::string Text(const std::uint8_t* data, std::size_t size) {
  return std::string(reinterpret_cast<const char*>(data), size);
}

/// Fields of `text` split at `sep` (at most `max_fields`; the last keeps the rest).
inline std::vector<std::string> Split(const std::string& text, char sep, std::size_t max_fields) {
  std::vector<std::string> out;
  std::size_t start = 0;
  while (out.size() + 1 < max_fields) {
    const std::size_t k = text.find(sep, start);
    if (k == std::string::npos) break;
    out.push_back(text.substr(start, k - start));
    start = k + 1;
  }
  out.push_back(text.substr(start));
  return out;
}

}  // namespace zeeline::fuzz
