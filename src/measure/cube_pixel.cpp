#include "zeeline/measure/cube_pixel.hpp"

#include "zeeline/core/errors.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/io/quality_flags.hpp"
#include "zeeline/maps/data_sanity.hpp"

namespace zeeline {

Spectrum1D ReadCubePixelSpectrum(const std::string& cube_path, long x, long y, const SpectrumReadOptions& options) {
  const std::string bad = options.Validate();
  if (!bad.empty()) throw OptionError(bad);
  CubeReadOptions ro;
  ro.v_sign = options.v_sign;
  ro.threads = 1;
  CubeReader reader(cube_path, ro);
  const CubeInfo& info = reader.info();
  const std::string where = cube_path + " pixel (" + std::to_string(x + 1) + ", " + std::to_string(y + 1) + ")";
  if (x < 0 || y < 0 || x >= info.nx || y >= info.ny)
    throw SpectrumError(where + ": outside the image, which has " + std::to_string(info.nx) + " x " +
                        std::to_string(info.ny) + " pixels (numbered from 1)");
  const int iq = info.StokesIndex(StokesParameter::kQ), iu = info.StokesIndex(StokesParameter::kU);
  if ((iq < 0) != (iu < 0)) throw SpectrumError(cube_path + ": Stokes Q and U must come together");
  const int ii = info.StokesIndex(StokesParameter::kI);
  if (ii < 0) throw SpectrumError(cube_path + ": the cube has no Stokes I");
  CubeTile tile;
  reader.ReadRows(y, 1, tile);
  auto copy = [&](int s, std::vector<double>& out) {
    if (s < 0) return;
    const double* p = tile.Spectrum(x, s);
    out.assign(p, p + tile.n_wavelength);
  };
  Spectrum1D out;
  out.wavelength_nm = info.wavelength_nm;
  out.frame = info.frame;
  out.source = where;
  copy(ii, out.I);
  copy(iq, out.Q);
  copy(iu, out.U);
  copy(info.StokesIndex(StokesParameter::kV), out.V);
  // The range part of the map's data-sanity check (maps/data_sanity.hpp): such a pixel cannot be measured.
  const std::uint32_t range = CheckSampleRange(out.View(), MakeSanityLimits(info.bitpix, 0.0, 0.0));
  if (range & kQualityNonFiniteInput)
    throw SpectrumError(where + ": NaN or Inf samples (QUALITY NONFINITE_INPUT in a map); pick another pixel");
  if (range & kQualityAbsurdInput)
    throw SpectrumError(where + ": samples beyond the plausible range of BITPIX " + std::to_string(info.bitpix) +
                        " (fill values, QUALITY ABSURD_INPUT in a map); pick another pixel");
  if (out.size() < kMinSpectrumSamples)
    throw SpectrumError(where + ": " + std::to_string(out.size()) + " wavelengths; expected at least " +
                        std::to_string(kMinSpectrumSamples));
  return out;
}

}  // namespace zeeline
