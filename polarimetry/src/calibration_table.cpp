#include "zeeline/polarimetry/calibration_table.hpp"

#include <cctype>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <set>
#include <sstream>

#include "core/utf8_bom.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline::polarimetry {
namespace {

std::string Trim(const std::string& s) {
  std::size_t b = 0, e = s.size();
  while (b < e && std::isspace(static_cast<unsigned char>(s[b]))) ++b;
  while (e > b && std::isspace(static_cast<unsigned char>(s[e - 1]))) --e;
  return s.substr(b, e - b);
}

std::string Lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

std::vector<std::string> SplitCsv(const std::string& line) {
  std::vector<std::string> cells;
  std::string cell;
  std::istringstream in(line);
  while (std::getline(in, cell, ',')) cells.push_back(Trim(cell));
  if (!line.empty() && line.back() == ',') cells.push_back("");
  return cells;
}

bool ParseNumber(const std::string& s, double& v) {
  if (s.empty()) return false;
  char* end = nullptr;
  v = std::strtod(s.c_str(), &end);
  return end == s.c_str() + s.size() && std::isfinite(v);
}

bool StartsWith(const std::string& s, const char* prefix) { return Lower(s).rfind(prefix, 0) == 0; }

}  // namespace

int CalibrationSequence::FirstOpen() const {
  for (std::size_t k = 0; k < states.size(); ++k)
    if (states[k].open) return static_cast<int>(k);
  return -1;
}

CalibrationSequence ParseCalibrationTable(const std::string& text, const std::string& origin) {
  CalibrationSequence seq;
  seq.source = origin;
  std::istringstream in(WithoutUtf8Bom(text));  // spreadsheet exports start with a byte-order mark
  std::string raw;
  int line_no = 0;
  bool have_header = false;
  std::set<std::string> names;
  auto fail = [&](const std::string& what) {
    throw CalibrationError(origin + ":" + std::to_string(line_no) + ": " + what);
  };
  while (std::getline(in, raw)) {
    ++line_no;
    if (!raw.empty() && raw.back() == '\r') raw.pop_back();
    const std::string line = Trim(raw);
    if (line.empty() || line[0] == '#') continue;
    const std::vector<std::string> cells = SplitCsv(line);
    if (!have_header) {
      const char* fixed[] = {"state_name", "polarizer_deg", "retarder_deg"};
      for (int c = 0; c < 3; ++c)
        if (static_cast<int>(cells.size()) <= c || Lower(cells[static_cast<std::size_t>(c)]) != fixed[c])
          fail("header column " + std::to_string(c + 1) + " is '" +
               (static_cast<int>(cells.size()) > c ? cells[static_cast<std::size_t>(c)] : std::string()) +
               "', expected '" + fixed[c] + "' (header: state_name,polarizer_deg,retarder_deg,m1,...,mN)");
      for (std::size_t c = 3; c < cells.size(); ++c)
        if (Lower(cells[c]) != "m" + std::to_string(c - 2))
          fail("header column " + std::to_string(c + 1) + " is '" + cells[c] + "', expected 'm" +
               std::to_string(c - 2) + "'");
      seq.n_modulation = static_cast<int>(cells.size()) - 3;
      if (seq.n_modulation < 4)
        fail("the header names " + std::to_string(seq.n_modulation) +
             " modulation states (m1..mN); at least 4 are needed to measure I, Q, U and V");
      have_header = true;
      continue;
    }
    if (cells.size() != static_cast<std::size_t>(seq.n_modulation) + 3)
      fail(std::to_string(cells.size()) + " columns, expected " + std::to_string(seq.n_modulation + 3) +
           " (as in the header)");
    CalibrationState st;
    st.line = line_no;
    st.name = cells[0];
    if (st.name.empty()) fail("column 1 (state_name) is empty");
    if (!names.insert(st.name).second) fail("column 1 (state_name): '" + st.name + "' appears twice");
    st.dark = StartsWith(st.name, "dark");
    st.open = StartsWith(st.name, "open");
    for (int c = 1; c <= 2; ++c) {
      const std::string& cell = cells[static_cast<std::size_t>(c)];
      if (cell.empty()) continue;
      double v = 0.0;
      if (!ParseNumber(cell, v))
        fail("column " + std::to_string(c + 1) + " (" + (c == 1 ? "polarizer_deg" : "retarder_deg") + "): '" + cell +
             "' is not a number (blank = element out of the beam)");
      (c == 1 ? st.polariser_deg : st.retarder_deg) = v;
    }
    if (st.open && (st.polariser_deg || st.retarder_deg))
      fail("state '" + st.name + "' is named open... (nothing in the beam) but has an angle; leave both blank");
    st.counts.resize(seq.n_modulation);
    for (int j = 0; j < seq.n_modulation; ++j) {
      const std::string& cell = cells[static_cast<std::size_t>(j + 3)];
      double v = 0.0;
      if (!ParseNumber(cell, v))
        fail("column " + std::to_string(j + 4) + " (m" + std::to_string(j + 1) + "): '" + cell +
             "' is not a finite number of counts");
      st.counts(j) = v;
    }
    seq.states.push_back(st);
  }
  if (!have_header)
    throw CalibrationError(origin + ": no header line (state_name,polarizer_deg,retarder_deg,m1,...,mN)");
  if (seq.states.empty()) throw CalibrationError(origin + ": no calibration states after the header");
  if (seq.FirstOpen() < 0)
    throw CalibrationError(origin + ": no state named open... (nothing in the beam); one is needed to fix the "
                           "transmission scale (only T*O is observable)");
  return seq;
}

CalibrationSequence ReadCalibrationTable(const std::string& path) {
  std::ifstream f(path, std::ios::binary);
  if (!f) throw CalibrationError(path + ": cannot open the calibration table");
  std::ostringstream s;
  s << f.rdbuf();
  return ParseCalibrationTable(s.str(), path);
}

}  // namespace zeeline::polarimetry
