// zeeline/atomic/line_list.hpp -- the zeeline line list (plain CSV), documented in docs/line_list.md.
//
// Lines starting with '#' and blank lines are ignored. The first other line is a header naming the
// columns (any order). Required: name, wavelength, frame, species, lower, upper.
// Optional: g_lower, g_upper (measured Landé factors, override the computed ones), mass_amu,
// einstein_A (s^-1), lower_term_energies and upper_term_energies ("J=E;J=E" in cm^-1, every level of the
// level's LS term: the mixed-regime pattern, atomic/paschen_back.hpp). Cells are separated by commas and trimmed; there is no quoting; commas inside
// parentheses (jK(...), jj(...) levels) do not split cells. Wavelength cells carry a unit ("630.2494nm", "6302.494A"; bare numbers are nm).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/core/wavelength_frame.hpp"

namespace zeeline {

struct LineEntry {
  std::string name;
  double wavelength_nm = 0.0;
  WavelengthFrame frame = WavelengthFrame::kAir;
  std::string species;
  Level lower;
  Level upper;
  std::optional<double> mass_amu;
  std::optional<double> einstein_A_per_s;
  TermEnergies lower_term_energies, upper_term_energies;  ///< cm^-1, empty = not given
  int source_line = 0;  ///< 1-based line number in the file
};

/// Read a line list; throws LineListError naming the file, line number and column on any problem.
std::vector<LineEntry> ReadLineList(const std::string& path);

/// Parse line-list text already in memory; `origin` names it in error messages.
std::vector<LineEntry> ParseLineList(const std::string& text, const std::string& origin);

/// The entry whose name matches exactly; throws LineListError listing the names when there is none.
const LineEntry& FindLine(const std::vector<LineEntry>& lines, const std::string& name,
                          const std::string& origin);

}  // namespace zeeline
