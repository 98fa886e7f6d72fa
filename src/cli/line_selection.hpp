// line_selection.hpp (CLI-private) -- the options that name a spectral line, shared by the commands that
// work on one line: --lower/--upper/--wavelength, or --line NAME with --catalog FILE, and --gs, --frame.
#pragma once

#include <optional>
#include <string>

#include <CLI/CLI.hpp>

#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/wavelength_frame.hpp"

namespace zeeline::cli {

struct LineSelectionArgs {
  std::string lower, upper, wavelength, line, catalog, frame;
  std::optional<double> gs;
};

struct SelectedLine {
  std::string description;                 ///< e.g. "FeI_6302 (5P1 -> 5D0) 630.2494 nm air, g_eff 2.5035"
  std::string lower_text, upper_text;
  double rest_wavelength_nm = 0.0;
  std::optional<WavelengthFrame> frame;    ///< unset = same frame as the data
  std::optional<double> mass_amu;
  ZeemanPattern pattern;
  TermEnergies lower_term_energies, upper_term_energies;  ///< from the catalog's columns; empty = not given
};

/// Adds the options to `cmd`; `frame_help` explains what the frame defaults to for this command.
void AddLineSelectionOptions(CLI::App* cmd, LineSelectionArgs& args, const std::string& frame_help);

/// Throws LevelParseError (prefixed by `where`) when both levels state the same parity
/// (ElectricDipoleParityProblem): the one parity rule of every command that takes a line.
void RequireParityChange(const Level& lower, const Level& upper, const std::string& where);

/// A field strength |B| from the command line (`--field` of `line` and `profile`): units as in
/// core/units.hpp; negative values are refused with an OptionError naming `option` (the one rule: a
/// strength is >= 0, its direction is the inclination, docs/conventions.md).
double ParseFieldStrength_gauss(const std::string& text, const std::string& option);

/// The mixed-regime (Paschen–Back) options shared by `measure` and `calibrate magnet`.
struct RegimeArgs {
  std::string regime = "auto", upper_energies, lower_energies;
};
void AddRegimeOptions(CLI::App* cmd, RegimeArgs& args);
/// The line's mixed-regime model from the options or the catalog's energy columns (nullopt when neither
/// gives what the terms need; an error when `paschen-back` is asked for then, or energies are given twice).
std::optional<PaschenBackLine> ResolveMixedLine(const SelectedLine& line, const LineSelectionArgs& line_args,
                                                const RegimeArgs& args);

/// Resolves the options (reads the catalog when given). Throws OptionError / LineListError /
/// LevelParseError / UnitError with the offending value.
SelectedLine ResolveLine(const LineSelectionArgs& args);

}  // namespace zeeline::cli
