#include "cli/line_selection.hpp"

#include <cmath>
#include <cstdio>

#include "zeeline/atomic/line_list.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline::cli {

void AddLineSelectionOptions(CLI::App* cmd, LineSelectionArgs& a, const std::string& frame_help) {
  cmd->add_option("--lower", a.lower, "lower level, e.g. 5P1, 2P3/2, jK(2P3/2,s,3/2,2)");
  cmd->add_option("--upper", a.upper, "upper level, e.g. 5D0");
  cmd->add_option("--wavelength", a.wavelength, "rest wavelength with unit, e.g. 630.2494nm");
  cmd->add_option("--line", a.line, "line name in the --catalog line list");
  cmd->add_option("--catalog", a.catalog, "line list file (docs/line_list.md)");
  cmd->add_option("--frame", a.frame, "air or vacuum: frame of --wavelength; " + frame_help);
  cmd->add_option("--gs", a.gs, "electron spin g-factor (default CODATA 2.00231930436; 2 = textbook)");
}

void RequireParityChange(const Level& lower, const Level& upper, const std::string& where) {
  const std::string problem = ElectricDipoleParityProblem(lower, upper);
  if (!problem.empty()) throw LevelParseError(where + problem);
}

double ParseFieldStrength_gauss(const std::string& text, const std::string& option) {
  const double b = ParseField_gauss(text);
  if (!(b >= 0.0) || !std::isfinite(b))
    throw OptionError(option + " " + text + ": a field strength must be finite and >= 0; give its direction with "
                      "the inclination (180 deg = pointing away from the observer)");
  return b;
}

void AddRegimeOptions(CLI::App* cmd, RegimeArgs& a) {
  cmd->add_option("--regime", a.regime,
                  "zeeman, paschen-back or auto (default): auto uses the mixed-regime pattern when the term energies "
                  "are known and the field exceeds a tenth of the line's linear breakdown field (docs/atomic.md)");
  cmd->add_option("--upper-term-energies", a.upper_energies,
                  "energies of every J of the upper LS term in cm^-1, e.g. 1/2=14903.66,3/2=14904.00");
  cmd->add_option("--lower-term-energies", a.lower_energies, "the same for the lower term");
}

std::optional<PaschenBackLine> ResolveMixedLine(const SelectedLine& line, const LineSelectionArgs& line_args,
                                                const RegimeArgs& a) {
  const ZeemanRegime regime = ZeemanRegimeFromString(a.regime);
  TermEnergies el = line.lower_term_energies, eu = line.upper_term_energies;
  const bool from_options = !a.lower_energies.empty() || !a.upper_energies.empty();
  if (from_options && (!el.empty() || !eu.empty()))
    throw OptionError("the line list already gives the term energies; drop --lower/--upper-term-energies");
  if (!a.lower_energies.empty()) el = ParseTermEnergies(a.lower_energies, "--lower-term-energies");
  if (!a.upper_energies.empty()) eu = ParseTermEnergies(a.upper_energies, "--upper-term-energies");
  LandeOptions lande;
  if (line_args.gs) lande.g_spin = *line_args.gs;
  std::string why_not;
  const std::string src_l = from_options ? "--lower-term-energies" : "column 'lower_term_energies'";
  const std::string src_u = from_options ? "--upper-term-energies" : "column 'upper_term_energies'";
  auto mixed = TryMakePaschenBackLine(ParseLevel(line.lower_text), el, ParseLevel(line.upper_text), eu, lande, src_l,
                                      src_u, &why_not);
  if (!mixed && regime == ZeemanRegime::kPaschenBack) throw LevelParseError("--regime paschen-back: " + why_not);
  return mixed;
}

SelectedLine ResolveLine(const LineSelectionArgs& a) {
  LandeOptions lande;
  if (a.gs) lande.g_spin = *a.gs;
  const std::string bad = lande.Validate();
  if (!bad.empty()) throw OptionError("--gs: " + bad);
  SelectedLine s;
  std::string name;
  if (!a.line.empty() || !a.catalog.empty()) {
    if (a.line.empty() || a.catalog.empty()) throw OptionError("--line and --catalog go together");
    if (!a.lower.empty() || !a.upper.empty() || !a.wavelength.empty())
      throw OptionError("--line/--catalog cannot be combined with --lower/--upper/--wavelength");
    const auto lines = ReadLineList(a.catalog);
    const LineEntry& e = FindLine(lines, a.line, a.catalog);
    name = e.name + " ";
    s.lower_text = e.lower.text;
    s.upper_text = e.upper.text;
    s.rest_wavelength_nm = e.wavelength_nm;
    s.frame = e.frame;
    s.mass_amu = e.mass_amu;
    RequireParityChange(e.lower, e.upper, a.catalog + ":" + std::to_string(e.source_line) + ": ");
    s.lower_term_energies = e.lower_term_energies;
    s.upper_term_energies = e.upper_term_energies;
    s.pattern = ComputeZeemanPattern(e.lower, e.upper, lande);
  } else {
    if (a.lower.empty() || a.upper.empty() || a.wavelength.empty())
      throw OptionError("name the line with --lower, --upper and --wavelength, or with --line NAME --catalog FILE");
    s.lower_text = a.lower;
    s.upper_text = a.upper;
    s.rest_wavelength_nm = ParseWavelength_nm(a.wavelength);
    const Level lower = ParseLevel(a.lower), upper = ParseLevel(a.upper);
    RequireParityChange(lower, upper, "--lower/--upper ");
    s.pattern = ComputeZeemanPattern(lower, upper, lande);
  }
  if (!a.frame.empty()) s.frame = WavelengthFrameFromString(a.frame);
  char buf[256];
  std::snprintf(buf, sizeof buf, "%s(%s -> %s) %.6f nm %s, g_eff %.4f, G %.4f", name.c_str(), s.lower_text.c_str(),
                s.upper_text.c_str(), s.rest_wavelength_nm, s.frame ? ToString(*s.frame).c_str() : "(data frame)",
                s.pattern.g_eff, s.pattern.G);
  s.description = buf;
  return s;
}

}  // namespace zeeline::cli
