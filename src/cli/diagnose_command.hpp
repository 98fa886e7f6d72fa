// diagnose_command.hpp (CLI-private) -- the parts of `zeeline broadening diagnose` that the Python module
// calls too (src/python/): the options, and the diagnosis of a spectrum already in memory, so that both give
// the same numbers and the same JSON keys (docs/broadening.md).
#pragma once

#include <optional>
#include <ostream>
#include <string>

#include <CLI/CLI.hpp>

#include "zeeline/measure/spectrum_reader.hpp"

namespace zeeline::cli {

struct DiagnoseArgs {
  std::string spectrum, catalog, lines, instrument_fwhm, microturbulence, window, png;
  std::optional<double> gs;
  double noise = 0.0, noise_v = 0.0, detection_sigma = 3.0, degeneracy_tolerance = 0.1;
  int v_sign = 1;
  bool no_v = false, json = false, overwrite = false;
};

/// Every option of `broadening diagnose` except the SPECTRUM argument.
void AddDiagnoseOptions(CLI::App* cmd, DiagnoseArgs& a);

/// The diagnosis of `s` (read and V-sign corrected): writes the JSON object `--json` prints and gives the
/// lab-safety note through Notice() (cli/notices.hpp).
void DiagnoseToJson(const DiagnoseArgs& a, const Spectrum1D& s, std::ostream& out);

}  // namespace zeeline::cli
