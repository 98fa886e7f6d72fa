// Fuzz target: the FITS header interpretation of the cube reader (axis roles, WCS, STOKES, BSCALE/BZERO/BLANK,
// size checks) and of the 1-D spectrum reader, fed with mutated headers.
//
// Input: header text, one card per line (cut or blank-padded to 80 characters; END appended; padded to a
// 2880-byte block). The harness reads BITPIX and NAXISn from the cards and, when the data they claim is at
// most 1 MiB, appends that many bytes -- the input's bytes repeated, so mutations reach NaN, Inf, BLANK and
// huge values -- padded to 2880; otherwise no data follows (the truncated-file path). The file goes to a
// per-process temporary path and is opened by CubeReader (header, first row, statistics) and ReadSpectrumFits.
#include <unistd.h>

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>

#include "fuzz/fuzz_input.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/measure/spectrum_reader.hpp"

namespace {

const std::string& TempPath() {
  static const std::string path = [] {
    const char* base = std::getenv("TMPDIR");
    std::string templ = std::string(base && *base ? base : "/tmp") + "/zeeline_fuzz_XXXXXX.fits";
    const int fd = mkstemps(templ.data(), 5);
    if (fd < 0) std::abort();
    close(fd);
    return templ;
  }();
  return path;
}

long long CardInt(const std::string& card, const char* key) {
  const std::string k = card.substr(0, 8);
  std::string want = key;
  want.resize(8, ' ');
  if (k != want || card.size() < 10 || card[8] != '=') return -1;
  return std::strtoll(card.c_str() + 10, nullptr, 10);
}

struct Cleanup {
  ~Cleanup() { std::remove(TempPath().c_str()); }
} cleanup;

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace zeeline;
  const std::string text = fuzz::Text(data, size);
  std::string file;
  long long bitpix = 0, naxis[4] = {-1, -1, -1, -1};
  for (std::string card : fuzz::Split(text, '\n', 2000)) {
    card.resize(80, ' ');
    if (const long long b = CardInt(card, "BITPIX"); b != -1) bitpix = b;
    for (int i = 0; i < 4; ++i)
      if (const long long n = CardInt(card, ("NAXIS" + std::to_string(i + 1)).c_str()); n != -1) naxis[i] = n;
    file += card;
  }
  file += std::string("END").append(77, ' ');
  file.resize((file.size() + 2879) / 2880 * 2880, ' ');
  long double bytes = std::fabs(static_cast<long double>(bitpix)) / 8.0L;
  for (long long n : naxis)
    if (n >= 0) bytes *= static_cast<long double>(n);
  if (bytes > 0.0L && bytes <= 1048576.0L && size > 0) {
    const std::size_t nb = static_cast<std::size_t>(bytes);
    for (std::size_t i = 0; i < nb; ++i) file.push_back(static_cast<char>(data[i % size]));
    file.resize((file.size() + 2879) / 2880 * 2880, '\0');
  }
  {
    std::FILE* f = std::fopen(TempPath().c_str(), "wb");
    if (!f) std::abort();
    std::fwrite(file.data(), 1, file.size(), f);
    std::fclose(f);
  }

  try {
    CubeReadOptions o;
    o.threads = 1;
    CubeReader reader(TempPath(), o);
    const CubeInfo& info = reader.info();
    CubeTile tile;
    reader.ReadRows(0, 1, tile);
    if (info.nx * info.ny <= 4096) reader.ScanStatistics();
  } catch (const FitsError&) {
  } catch (const OptionError&) {
  }
  try {
    (void)ReadSpectrumFits(TempPath());
  } catch (const SpectrumError&) {
  } catch (const OptionError&) {
  }
  return 0;
}
