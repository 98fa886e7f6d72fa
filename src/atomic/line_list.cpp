#include "zeeline/atomic/line_list.hpp"

#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <map>
#include <sstream>

#include "core/utf8_bom.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline {
namespace {

std::string Trim(const std::string& s) {
  const auto b = s.find_first_not_of(" \t\r");
  if (b == std::string::npos) return "";
  const auto e = s.find_last_not_of(" \t\r");
  return s.substr(b, e - b + 1);
}

// Split on commas that are not inside parentheses, so "jK(2P3/2,p,5/2,2)" stays one cell.
std::vector<std::string> SplitCells(const std::string& line) {
  std::vector<std::string> cells;
  std::string cell;
  int depth = 0;
  for (char c : line) {
    if (c == '(') ++depth;
    if (c == ')' && depth > 0) --depth;
    if (c == ',' && depth == 0) {
      cells.push_back(Trim(cell));
      cell.clear();
    } else {
      cell += c;
    }
  }
  cells.push_back(Trim(cell));
  return cells;
}

const char* const kRequired[] = {"name", "wavelength", "frame", "species", "lower", "upper"};
const char* const kOptional[] = {"g_lower", "g_upper", "mass_amu", "einstein_A", "lower_term_energies",
                                 "upper_term_energies"};

}  // namespace

std::vector<LineEntry> ParseLineList(const std::string& text, const std::string& origin) {
  std::vector<LineEntry> out;
  std::map<std::string, std::size_t> column;
  std::istringstream in(WithoutUtf8Bom(text));
  std::string raw;
  int line_no = 0;
  bool have_header = false;
  while (std::getline(in, raw)) {
    ++line_no;
    const std::string line = Trim(raw);
    if (line.empty() || line[0] == '#') continue;
    const auto cells = SplitCells(line);
    auto where = [&](const std::string& col) {
      return origin + ":" + std::to_string(line_no) + (col.empty() ? "" : " column '" + col + "'");
    };
    if (!have_header) {
      for (std::size_t i = 0; i < cells.size(); ++i) {
        bool known = false;
        for (const char* r : kRequired) known |= cells[i] == r;
        for (const char* o : kOptional) known |= cells[i] == o;
        if (!known)
          throw LineListError(where("") + ": unknown column '" + cells[i] +
                              "' in header (known: name, wavelength, frame, species, lower, upper, g_lower, "
                              "g_upper, mass_amu, einstein_A, lower_term_energies, upper_term_energies)");
        if (column.count(cells[i])) throw LineListError(where("") + ": column '" + cells[i] + "' repeated");
        column[cells[i]] = i;
      }
      for (const char* r : kRequired)
        if (!column.count(r))
          throw LineListError(where("") + ": header lacks the required column '" + std::string(r) + "'");
      have_header = true;
      continue;
    }
    if (cells.size() != column.size())
      throw LineListError(where("") + ": expected " + std::to_string(column.size()) + " cells, found " +
                          std::to_string(cells.size()));
    auto cell = [&](const char* name) -> std::string {
      auto it = column.find(name);
      return it == column.end() ? std::string() : cells[it->second];
    };
    auto number = [&](const char* name) -> std::optional<double> {
      const std::string c = cell(name);
      if (c.empty()) return std::nullopt;
      char* end = nullptr;
      errno = 0;
      const double v = std::strtod(c.c_str(), &end);
      if (*end != '\0' || errno == ERANGE || !std::isfinite(v))
        throw LineListError(where(name) + ": '" + c + "' is not a finite number");
      return v;
    };
    LineEntry e;
    e.source_line = line_no;
    e.name = cell("name");
    e.species = cell("species");
    for (const char* r : kRequired)
      if (cell(r).empty()) throw LineListError(where(r) + ": required cell is empty");
    try {
      e.wavelength_nm = ParseWavelength_nm(cell("wavelength"));
    } catch (const UnitError& err) {
      throw LineListError(where("wavelength") + ": " + err.what());
    }
    try {
      e.frame = WavelengthFrameFromString(cell("frame"));
    } catch (const OptionError& err) {
      throw LineListError(where("frame") + ": " + err.what());
    }
    for (const char* which : {"lower", "upper"}) {
      try {
        Level lv = ParseLevel(cell(which));
        const auto g = number(which[0] == 'l' ? "g_lower" : "g_upper");
        if (g) lv.measured_g = *g;
        (which[0] == 'l' ? e.lower : e.upper) = lv;
      } catch (const LevelParseError& err) {
        throw LineListError(where(which) + ": " + err.what());
      }
    }
    e.mass_amu = number("mass_amu");
    if (e.mass_amu && !(*e.mass_amu > 0.0))
      throw LineListError(where("mass_amu") + ": mass must be positive");
    e.einstein_A_per_s = number("einstein_A");
    if (e.einstein_A_per_s && *e.einstein_A_per_s < 0.0)
      throw LineListError(where("einstein_A") + ": Einstein A must not be negative");
    for (const char* col : {"lower_term_energies", "upper_term_energies"}) {
      const std::string energies_text = cell(col);
      if (energies_text.empty()) continue;
      try {
        (col[0] == 'l' ? e.lower_term_energies : e.upper_term_energies) = ParseTermEnergies(energies_text, "term energies");
        // complete and consistent with the level (every J, no other): checked here, not at first use
        MakeTermStructure(col[0] == 'l' ? e.lower : e.upper,
                          col[0] == 'l' ? e.lower_term_energies : e.upper_term_energies, "term energies");
      } catch (const LevelParseError& err) {
        throw LineListError(where(col) + ": " + err.what());
      }
    }
    for (const auto& prev : out)
      if (prev.name == e.name)
        throw LineListError(where("name") + ": line name '" + e.name + "' already used on line " +
                            std::to_string(prev.source_line));
    out.push_back(std::move(e));
  }
  if (!have_header) throw LineListError(origin + ": no header line (expected e.g. 'name,wavelength,frame,...')");
  if (out.empty()) throw LineListError(origin + ": the line list holds no lines");
  return out;
}

std::vector<LineEntry> ReadLineList(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw LineListError(path + ": cannot open the line list for reading");
  std::ostringstream ss;
  ss << in.rdbuf();
  return ParseLineList(ss.str(), path);
}

const LineEntry& FindLine(const std::vector<LineEntry>& lines, const std::string& name,
                          const std::string& origin) {
  std::string names;
  for (const auto& l : lines) {
    if (l.name == name) return l;
    names += (names.empty() ? "" : ", ") + l.name;
  }
  throw LineListError(origin + ": no line named '" + name + "' (available: " + names + ")");
}

}  // namespace zeeline
