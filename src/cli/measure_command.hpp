// measure_command.hpp (CLI-private) -- the parts of `zeeline measure` that the Python module calls too
// (src/python/): the options, and the measurement of a spectrum already in memory, so that both give the
// same numbers and the same JSON keys (docs/measure.md).
#pragma once

#include <optional>
#include <ostream>
#include <string>

#include <CLI/CLI.hpp>

#include "cli/line_selection.hpp"
#include "zeeline/measure/measurement.hpp"
#include "zeeline/measure/spectrum_reader.hpp"

namespace zeeline::cli {

struct MeasureArgs {
  std::string spectrum, instrument_fwhm, window, png, json_file, pixel, world;
  RegimeArgs regime;
  LineSelectionArgs line;
  std::optional<double> g_eff, damping;
  bool emission = false, absorption = false, json = false, overwrite = false;
  int free_components = 0, realisations = 200, v_sign = 1;
  double noise = 0.0, weak_ratio = MeasureOptions{}.weak_ratio, resolution_ratio = MeasureOptions{}.resolution_ratio;
};

/// Every option of `measure` except the SPECTRUM argument.
void AddMeasureOptions(CLI::App* cmd, MeasureArgs& a);

/// The line named by the options: levels, a catalog entry, or a bare --wavelength with --g-eff.
SelectedLine MeasureLine(const MeasureArgs& a);

struct MeasureRun {
  MeasureOptions options;
  Measurement result;
};

/// The measurement of `s` (read and V-sign corrected) for the line from MeasureLine.
MeasureRun MeasureWithArgs(const MeasureArgs& a, const SelectedLine& line, const Spectrum1D& s);

/// The lab-safety note for an emission (lamp) line through Notice() (cli/notices.hpp); nothing otherwise.
void NoticeMeasureSafety(const MeasureRun& run);

/// The JSON object `measure --json` prints.
void WriteMeasureJson(std::ostream& out, const Spectrum1D& s, const SelectedLine& line, const MeasureRun& run);

}  // namespace zeeline::cli
